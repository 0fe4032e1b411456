//! `popgauge_plugin.h` and `popgauge_abi::ffi` describe the same ABI: the same constants, the
//! same structs with the same field names, offsets and sizes. The layout of each header struct
//! is computed from its text with the C rules (natural alignment, LP64) and compared with the
//! Rust `offset_of!`/`size_of` of the type of the same name.
#![cfg(target_pointer_width = "64")]

use std::collections::BTreeMap;
use std::mem::{offset_of, size_of};

use popgauge_abi::ffi::*;

const HEADER: &str = include_str!("../popgauge_plugin.h");

/// (size, alignment) of a field type written in the header.
fn c_type_layout(ty: &str, structs: &BTreeMap<String, Layout>) -> (usize, usize) {
    let ty = ty.trim().trim_start_matches("const ").trim();
    if ty.ends_with('*') {
        return (8, 8);
    }
    match ty {
        "uint64_t" | "int64_t" => (8, 8),
        "uint32_t" | "int32_t" => (4, 4),
        "uint16_t" => (2, 2),
        "uint8_t" => (1, 1),
        other => {
            let s = structs.get(other).unwrap_or_else(|| panic!("header uses unknown type `{other}`"));
            (s.size, s.align)
        }
    }
}

#[derive(Debug)]
struct Layout {
    fields: Vec<(String, usize)>,
    size: usize,
    align: usize,
}

fn parse_header() -> BTreeMap<String, Layout> {
    let mut structs = BTreeMap::new();
    let mut rest = HEADER;
    while let Some(start) = rest.find("typedef struct ") {
        let after = &rest[start + "typedef struct ".len()..];
        let name = after.split_whitespace().next().unwrap().to_string();
        let body = &after[after.find('{').unwrap() + 1..after.find('}').unwrap()];
        let (mut offset, mut align) = (0usize, 1usize);
        let mut fields = Vec::new();
        for decl in body.split(';').map(str::trim).filter(|d| !d.is_empty()) {
            let (field, ty) = if let Some(fp) = decl.find("(*") {
                // A function pointer: `ret (*name)(args)`.
                let name_end = decl[fp..].find(')').unwrap() + fp;
                (decl[fp + 2..name_end].to_string(), "void *".to_string())
            } else {
                let split = decl.rfind([' ', '*']).unwrap();
                (decl[split + 1..].to_string(), decl[..=split].to_string())
            };
            let (size, field_align) = c_type_layout(&ty, &structs);
            offset = offset.div_ceil(field_align) * field_align;
            fields.push((field, offset));
            offset += size;
            align = align.max(field_align);
        }
        let size = offset.div_ceil(align) * align;
        structs.insert(name, Layout { fields, size, align });
        rest = &after[after.find('}').unwrap()..];
    }
    structs
}

fn define(name: &str) -> String {
    let line = HEADER
        .lines()
        .find(|l| l.starts_with(&format!("#define {name} ")))
        .unwrap_or_else(|| panic!("no #define {name}"));
    line[format!("#define {name} ").len()..].trim().to_string()
}

/// Size and (field, offset) list of a Rust type.
type RustLayout = (usize, Vec<(String, usize)>);

macro_rules! rust_layout {
    ($ty:ty { $($field:ident),* $(,)? }) => {
        (size_of::<$ty>(), vec![$((stringify!($field).to_string(), offset_of!($ty, $field))),*])
    };
}

/// Common practice (the C rules of natural alignment on LP64 targets).
#[test]
fn structs_match_field_by_field() {
    let header = parse_header();
    let rust: BTreeMap<&str, RustLayout> = BTreeMap::from([
        ("pg_str", rust_layout!(PgStr { ptr, len })),
        ("pg_buf", rust_layout!(PgBuf { ptr, len, capacity })),
        ("pg_sample", rust_layout!(PgSample { id, population, year, reserved })),
        ("pg_locus", rust_layout!(PgLocus { name, chromosome, alleles, n_alleles, position, has_position, reserved })),
        (
            "pg_genotype_view",
            rust_layout!(PgGenotypeView {
                n_samples,
                n_loci,
                samples,
                loci,
                codes,
                active_samples,
                n_active_samples,
                active_loci,
                n_active_loci
            }),
        ),
        ("pg_plugin", rust_layout!(PgPlugin { abi_version, reserved, describe, run, free_buf })),
    ]);
    assert_eq!(header.keys().collect::<Vec<_>>(), rust.keys().collect::<Vec<_>>(), "the same structs on both sides");
    for (name, (size, fields)) in &rust {
        let c = &header[*name];
        assert_eq!(&c.fields, fields, "{name}: field names and offsets");
        assert_eq!(c.size, *size, "{name}: size");
    }
}

#[test]
fn constants_match() {
    assert_eq!(define("POPGAUGE_ABI_VERSION"), ABI_VERSION.to_string());
    assert_eq!(define("POPGAUGE_ENTRY_SYMBOL"), format!("\"{ENTRY_SYMBOL}\""));
    assert_eq!(define("POPGAUGE_STATUS_OK"), STATUS_OK.to_string());
    assert_eq!(define("POPGAUGE_STATUS_STEP_ERROR"), STATUS_STEP_ERROR.to_string());
    assert_eq!(define("POPGAUGE_STATUS_PANIC"), STATUS_PANIC.to_string());
    assert!(HEADER.contains(&format!("const pg_plugin *{ENTRY_SYMBOL}(void);")));
}
