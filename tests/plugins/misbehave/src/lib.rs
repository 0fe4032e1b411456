//! A deliberately misbehaving test plugin: its `mode` parameter selects how `run` goes wrong,
//! so the host's handling of each failure can be tested with one library.
//!
//! Modes: `ok` (a one-row table of sample counts), `error` (a step error), `panic`, `segfault`,
//! `abort`, `hang`, `invalid-json` (returns bytes that are not JSON) and `ragged` (a table whose
//! second row is short). `describe` uses the SDK unchanged; `run` is hand-wired so that
//! `invalid-json` can bypass the SDK's serialisation.

use popgauge_abi::ffi::{ABI_VERSION, PgBuf, PgGenotypeView, PgPlugin, PgStr, STATUS_OK};
use popgauge_abi::{Cell, Descriptor, ParamKind, Step, StepContext, StepError, StepOutput, Table};
use serde_json::json;

/// The misbehaving step.
#[derive(Debug, Default)]
pub struct Misbehave;

impl Step for Misbehave {
    fn descriptor(&self) -> Descriptor {
        let modes = ["ok", "error", "panic", "segfault", "abort", "hang", "invalid-json", "ragged"];
        Descriptor::new("misbehave", "0.1.0", "Test plugin that fails in the way its mode says").param(
            "mode",
            ParamKind::Choice { choices: modes.iter().map(|m| m.to_string()).collect() },
            json!("ok"),
            "how to fail",
        )
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let mode = ctx.params.get("mode").and_then(|m| m.as_str()).unwrap_or("ok");
        let mut table = Table::new(&["samples", "loci"]);
        table.push_row(vec![Cell::Int(ctx.view.n_samples() as i64), Cell::Int(ctx.view.n_loci() as i64)])?;
        match mode {
            "error" => return Err(StepError::new("deliberate step error")),
            "panic" => panic!("deliberate panic in run"),
            // SAFETY: none — this deliberately reads an unmapped address to crash the process.
            "segfault" => unsafe {
                std::ptr::read_volatile(std::ptr::without_provenance::<u64>(8));
            },
            "abort" => std::process::abort(),
            "hang" => loop {
                std::thread::sleep(std::time::Duration::from_secs(1));
            },
            "ragged" => table.rows.push(vec![Cell::Int(1)]),
            _ => {}
        }
        let mut output = StepOutput::default();
        output.tables.insert("counts".into(), table);
        Ok(output)
    }
}

fn step() -> &'static Misbehave {
    &Misbehave
}

/// Environment variable that makes `describe` return a descriptor that is not JSON (the
/// host's descriptor check is tested with it).
const BAD_DESCRIPTOR_ENV: &str = "POPGAUGE_TEST_BAD_DESCRIPTOR";

unsafe extern "C" fn describe(out: *mut PgBuf) -> i32 {
    if std::env::var_os(BAD_DESCRIPTOR_ENV).is_some() {
        // SAFETY: `out` is writable (ABI contract).
        unsafe { write_raw(out, b"{\"uses\": \"misbehave\", oops") };
        return STATUS_OK;
    }
    // SAFETY: forwarded from the host.
    unsafe { popgauge_abi::sdk::describe(step, out) }
}

/// Writes raw bytes into `out` the way the SDK does (so the SDK's `free_buf` can free them).
///
/// # Safety
/// `out` must be writable.
unsafe fn write_raw(out: *mut PgBuf, bytes: &[u8]) {
    let mut bytes = std::mem::ManuallyDrop::new(bytes.to_vec());
    // SAFETY: `out` is writable (caller).
    unsafe { out.write(PgBuf { ptr: bytes.as_mut_ptr(), len: bytes.len() as u64, capacity: bytes.capacity() as u64 }) };
}

unsafe extern "C" fn run(view: *const PgGenotypeView, request: PgStr, out: *mut PgBuf) -> i32 {
    // SAFETY: the host's request is readable during the call.
    let text = String::from_utf8_lossy(unsafe { request.as_bytes() }).into_owned();
    if text.contains(r#""mode":"invalid-json""#) {
        // SAFETY: `out` is writable (ABI contract).
        unsafe { write_raw(out, b"{\"tables\": not json") };
        return STATUS_OK;
    }
    // SAFETY: forwarded from the host.
    unsafe { popgauge_abi::sdk::run(step, view, request, out) }
}

static TABLE: PgPlugin = PgPlugin {
    abi_version: ABI_VERSION,
    reserved: 0,
    describe: Some(describe),
    run: Some(run),
    free_buf: Some(popgauge_abi::sdk::free_buf),
};

/// The entry symbol.
#[unsafe(no_mangle)]
pub extern "C" fn popgauge_plugin_entry() -> *const PgPlugin {
    &TABLE
}
