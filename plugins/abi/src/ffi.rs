//! The C ABI between popgauge and an external step library (ABI version [`ABI_VERSION`]).
//!
//! A plugin is a shared library exporting one symbol, [`ENTRY_SYMBOL`]
//! (`popgauge_plugin_entry`), a function without arguments that returns a pointer to a static
//! [`PgPlugin`] table. The table starts with the ABI version (a `u32`), which the host reads
//! before trusting anything else, then three function pointers:
//!
//! - `describe(out)` writes the step's [`crate::Descriptor`] as UTF-8 JSON into `out`;
//! - `run(view, request, out)` runs the step on a zero-copy [`PgGenotypeView`] with a
//!   [`RunRequest`] (UTF-8 JSON: parameters, seed, earlier results, assessment facts) and writes
//!   the [`crate::StepOutput`] as UTF-8 JSON into `out`;
//! - `free_buf(buf)` releases a buffer the plugin wrote; the host copies every buffer first.
//!
//! Both return a status: [`STATUS_OK`], [`STATUS_STEP_ERROR`] (`out` holds the message, UTF-8
//! text) or [`STATUS_PANIC`] (`out` holds the panic message). The layout of every type here is
//! mirrored by `plugins/abi/popgauge_plugin.h` (a test keeps the two in step) and its evolution
//! rules are in `plugins/abi/EVOLUTION.md`.
//!
//! The genotype codes cross the boundary as a pointer to the host's own locus-major buffer (see
//! [`crate::GenotypeMatrix`]): nothing is copied per call. Metadata (sample ids, populations,
//! years, locus names, allele labels) crosses as arrays of pointer + length strings.

use std::marker::PhantomData;

use serde::{Deserialize, Serialize};

use crate::matrix::{AlleleCode, GenotypeMatrix, GenotypeView, LocusMeta, SampleMeta};
use crate::output::Finding;
use crate::params::Params;
use crate::step::{AssessmentInfo, Seed, StepContext, StepResult};

/// The ABI version this crate speaks; the host refuses a library with any other.
pub const ABI_VERSION: u32 = 2;

/// The name of the one symbol a plugin library exports.
pub const ENTRY_SYMBOL: &str = "popgauge_plugin_entry";

/// Status: the call succeeded and `out` holds JSON.
pub const STATUS_OK: i32 = 0;
/// Status: the step refused to run; `out` holds the message (UTF-8 text).
pub const STATUS_STEP_ERROR: i32 = 1;
/// Status: the plugin panicked (the SDK caught it); `out` holds the panic message.
pub const STATUS_PANIC: i32 = 2;

/// A borrowed UTF-8 string or byte range: pointer and length (no terminating NUL).
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct PgStr {
    /// First byte; may be null when `len` is 0.
    pub ptr: *const u8,
    /// Number of bytes.
    pub len: u64,
}

impl PgStr {
    /// A `PgStr` over `text` (valid while `text` is).
    pub fn new(text: &str) -> PgStr {
        PgStr { ptr: text.as_ptr(), len: text.len() as u64 }
    }

    /// The empty string with a null pointer (for "unknown").
    pub const NULL: PgStr = PgStr { ptr: std::ptr::null(), len: 0 };

    /// The bytes.
    ///
    /// # Safety
    /// `ptr..ptr+len` must be readable for `'a` (or `len` 0).
    pub unsafe fn as_bytes<'a>(self) -> &'a [u8] {
        if self.ptr.is_null() || self.len == 0 {
            return &[];
        }
        // SAFETY: the caller guarantees the range is readable for 'a.
        unsafe { std::slice::from_raw_parts(self.ptr, self.len as usize) }
    }
}

/// A buffer the plugin allocated and filled; the host copies it, then calls `free_buf` on it.
#[repr(C)]
#[derive(Debug)]
pub struct PgBuf {
    /// First byte (null for an empty buffer).
    pub ptr: *mut u8,
    /// Bytes written.
    pub len: u64,
    /// Whatever the plugin needs to free it (the Rust SDK stores the allocation's capacity).
    pub capacity: u64,
}

impl PgBuf {
    /// An empty buffer, for the host to pass as `out`.
    pub const EMPTY: PgBuf = PgBuf { ptr: std::ptr::null_mut(), len: 0, capacity: 0 };
}

/// One sample of the matrix.
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct PgSample {
    /// Sample id.
    pub id: PgStr,
    /// Population name.
    pub population: PgStr,
    /// Sampling year.
    pub year: i32,
    /// Always 0 (explicit padding).
    pub reserved: u32,
}

/// One locus of the matrix.
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct PgLocus {
    /// Locus name.
    pub name: PgStr,
    /// Chromosome or contig; a null pointer means unknown.
    pub chromosome: PgStr,
    /// Allele labels: code `k ≥ 1` is `alleles[k - 1]`.
    pub alleles: *const PgStr,
    /// Number of allele labels.
    pub n_alleles: u64,
    /// Position on the chromosome (1-based base pairs, as VCF POS); meaningful only when
    /// `has_position` is 1 (ABI version 2).
    pub position: u64,
    /// 1 when `position` is known, 0 when it is not.
    pub has_position: u32,
    /// Always 0 (explicit padding).
    pub reserved: u32,
}

/// The genotype data a step sees: the whole matrix plus the samples and loci still in play.
///
/// `codes` is locus-major: the two allele codes of matrix sample `s` at matrix locus `l` are
/// `codes[(l * n_samples + s) * 2]` and the next one; code 0 means untyped.
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct PgGenotypeView {
    /// Samples in the matrix.
    pub n_samples: u64,
    /// Loci in the matrix.
    pub n_loci: u64,
    /// `n_samples` samples.
    pub samples: *const PgSample,
    /// `n_loci` loci.
    pub loci: *const PgLocus,
    /// `n_loci * n_samples * 2` allele codes.
    pub codes: *const u16,
    /// Matrix indices of the samples in play, ascending.
    pub active_samples: *const u32,
    /// Number of samples in play.
    pub n_active_samples: u64,
    /// Matrix indices of the loci in play, ascending.
    pub active_loci: *const u32,
    /// Number of loci in play.
    pub n_active_loci: u64,
}

/// `describe(out)`: writes the descriptor JSON into `out`; returns a status.
pub type DescribeFn = unsafe extern "C" fn(out: *mut PgBuf) -> i32;
/// `run(view, request, out)`: runs the step; returns a status.
pub type RunFn = unsafe extern "C" fn(view: *const PgGenotypeView, request: PgStr, out: *mut PgBuf) -> i32;
/// `free_buf(buf)`: releases a buffer the plugin wrote.
pub type FreeFn = unsafe extern "C" fn(buf: PgBuf);

/// The table `popgauge_plugin_entry` returns. Fields are only ever appended (EVOLUTION.md).
#[repr(C)]
#[derive(Debug)]
pub struct PgPlugin {
    /// [`ABI_VERSION`] of the SDK the library was built with.
    pub abi_version: u32,
    /// Always 0 (explicit padding).
    pub reserved: u32,
    /// See [`DescribeFn`].
    pub describe: Option<DescribeFn>,
    /// See [`RunFn`].
    pub run: Option<RunFn>,
    /// See [`FreeFn`].
    pub free_buf: Option<FreeFn>,
}

/// The signature of the entry symbol.
pub type EntryFn = unsafe extern "C" fn() -> *const PgPlugin;

/// What `run` is given besides the genotype view, as UTF-8 JSON.
///
/// Unknown fields are ignored, so a newer host may add optional fields without breaking older
/// plugins (EVOLUTION.md).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct RunRequest {
    /// Resolved parameters (defaults filled in).
    pub params: Params,
    /// The step's seed.
    pub seed: u64,
    /// Results of the steps before it, in recipe order.
    #[serde(default)]
    pub earlier: Vec<StepResult>,
    /// Assessment facts.
    #[serde(default)]
    pub assessment: AssessmentInfo,
    /// Findings the readers made.
    #[serde(default)]
    pub input_findings: Vec<Finding>,
}

impl RunRequest {
    /// The seed as the step sees it.
    pub fn seed(&self) -> Seed {
        Seed(self.seed)
    }
}

/// The request JSON for a step context, written without cloning the earlier results.
///
/// # Errors
/// Only if a value cannot be written as JSON (popgauge's own types always can).
pub fn request_json(ctx: &StepContext<'_>) -> Result<Vec<u8>, serde_json::Error> {
    #[derive(Serialize)]
    struct RequestRef<'a> {
        params: &'a Params,
        seed: u64,
        earlier: &'a [StepResult],
        assessment: &'a AssessmentInfo,
        input_findings: &'a [Finding],
    }
    serde_json::to_vec(&RequestRef {
        params: ctx.params,
        seed: ctx.seed.0,
        earlier: ctx.earlier,
        assessment: ctx.assessment,
        input_findings: ctx.input_findings,
    })
}

/// Why a genotype view cannot cross the boundary.
#[derive(Debug, Clone, thiserror::Error, PartialEq, Eq)]
pub enum ViewError {
    /// More samples or loci than a `u32` index can name.
    #[error("the data have {0} samples or loci; the plugin interface takes at most 4294967295")]
    TooLarge(usize),
    /// A malformed view received from the other side.
    #[error("the genotype view is malformed: {0}")]
    Malformed(String),
}

/// A [`GenotypeView`] laid out for the C ABI: built by the host once per call from its own
/// matrix, pointing into it (the codes are not copied). Valid while the matrix is borrowed.
pub struct ForeignView<'a> {
    samples: Vec<PgSample>,
    loci: Vec<PgLocus>,
    // Kept alive for the `alleles` pointers in `loci`.
    _labels: Vec<Vec<PgStr>>,
    active_samples: Vec<u32>,
    active_loci: Vec<u32>,
    codes: *const u16,
    _matrix: PhantomData<&'a GenotypeMatrix>,
}

impl<'a> ForeignView<'a> {
    /// Lays out `view` for the ABI.
    ///
    /// # Errors
    /// [`ViewError::TooLarge`] when an index does not fit a `u32`.
    pub fn new(view: &GenotypeView<'a>) -> Result<ForeignView<'a>, ViewError> {
        let matrix = view.matrix();
        let samples = matrix
            .samples()
            .iter()
            .map(|s| PgSample {
                id: PgStr::new(&s.id),
                population: PgStr::new(&s.population),
                year: s.year,
                reserved: 0,
            })
            .collect();
        let labels: Vec<Vec<PgStr>> =
            matrix.loci().iter().map(|l| l.alleles.iter().map(|a| PgStr::new(a)).collect()).collect();
        let loci = matrix
            .loci()
            .iter()
            .zip(&labels)
            .map(|(l, alleles)| PgLocus {
                name: PgStr::new(&l.name),
                chromosome: l.chromosome.as_deref().map_or(PgStr::NULL, PgStr::new),
                alleles: alleles.as_ptr(),
                n_alleles: alleles.len() as u64,
                position: l.position.unwrap_or(0),
                has_position: u32::from(l.position.is_some()),
                reserved: 0,
            })
            .collect();
        // `AlleleCode` is `repr(transparent)` over `u16`.
        let codes = matrix.codes().as_ptr().cast::<u16>();
        Ok(ForeignView {
            samples,
            loci,
            _labels: labels,
            active_samples: to_u32(view.sample_indices())?,
            active_loci: to_u32(view.locus_indices())?,
            codes,
            _matrix: PhantomData,
        })
    }

    /// The `repr(C)` view, valid while `self` lives.
    pub fn as_ffi(&self) -> PgGenotypeView {
        PgGenotypeView {
            n_samples: self.samples.len() as u64,
            n_loci: self.loci.len() as u64,
            samples: self.samples.as_ptr(),
            loci: self.loci.as_ptr(),
            codes: self.codes,
            active_samples: self.active_samples.as_ptr(),
            n_active_samples: self.active_samples.len() as u64,
            active_loci: self.active_loci.as_ptr(),
            n_active_loci: self.active_loci.len() as u64,
        }
    }
}

fn to_u32(indices: &[usize]) -> Result<Vec<u32>, ViewError> {
    indices.iter().map(|&i| u32::try_from(i).map_err(|_| ViewError::TooLarge(i))).collect()
}

/// A genotype matrix rebuilt on the plugin's side of the boundary: metadata copied, codes
/// borrowed from the host's buffer, plus the active indices widened to `usize`.
#[derive(Debug)]
pub struct BorrowedMatrix {
    /// The matrix (its codes point into the host's buffer).
    pub matrix: GenotypeMatrix,
    /// Matrix indices of the samples in play.
    pub samples: Vec<usize>,
    /// Matrix indices of the loci in play.
    pub loci: Vec<usize>,
}

impl BorrowedMatrix {
    /// The view of the samples and loci in play.
    pub fn view(&self) -> GenotypeView<'_> {
        GenotypeView::new(&self.matrix, &self.samples, &self.loci)
    }
}

/// Rebuilds the matrix from a [`PgGenotypeView`] without copying the codes.
///
/// # Errors
/// [`ViewError::Malformed`] for a null pointer, text that is not UTF-8, an index out of range or
/// a code without a label.
///
/// # Safety
/// Every pointer in `view` must be valid for the lengths it states, and the memory must stay
/// valid and unmodified while the returned value exists.
pub unsafe fn borrow_matrix(view: &PgGenotypeView) -> Result<BorrowedMatrix, ViewError> {
    let n_samples = view.n_samples as usize;
    let n_loci = view.n_loci as usize;
    // SAFETY (all four slices): the caller guarantees each pointer covers the stated length.
    let samples = unsafe { slice(view.samples, n_samples, "samples")? };
    let loci = unsafe { slice(view.loci, n_loci, "loci")? };
    let codes = unsafe { slice(view.codes.cast::<AlleleCode>(), n_samples * n_loci * 2, "codes")? };
    let active_samples = unsafe { slice(view.active_samples, view.n_active_samples as usize, "active_samples")? };
    let active_loci = unsafe { slice(view.active_loci, view.n_active_loci as usize, "active_loci")? };
    let sample_meta = samples
        .iter()
        .map(|s| {
            // SAFETY: the caller guarantees the strings are readable.
            Ok(SampleMeta { id: unsafe { text(s.id)? }, population: unsafe { text(s.population)? }, year: s.year })
        })
        .collect::<Result<Vec<_>, ViewError>>()?;
    let locus_meta = loci
        .iter()
        .map(|l| {
            // SAFETY: the caller guarantees the labels array and strings are readable.
            let labels = unsafe { slice(l.alleles, l.n_alleles as usize, "alleles")? };
            Ok(LocusMeta {
                name: unsafe { text(l.name)? },
                alleles: labels.iter().map(|a| unsafe { text(*a) }).collect::<Result<_, _>>()?,
                chromosome: if l.chromosome.ptr.is_null() { None } else { Some(unsafe { text(l.chromosome)? }) },
                position: (l.has_position != 0).then_some(l.position),
            })
        })
        .collect::<Result<Vec<_>, ViewError>>()?;
    let widen = |indices: &[u32], bound: usize, what: &str| -> Result<Vec<usize>, ViewError> {
        match indices.iter().find(|&&i| i as usize >= bound) {
            Some(bad) => Err(ViewError::Malformed(format!("{what} index {bad} is out of range (0..{bound})"))),
            None => Ok(indices.iter().map(|&i| i as usize).collect()),
        }
    };
    let samples = widen(active_samples, n_samples, "sample")?;
    let loci = widen(active_loci, n_loci, "locus")?;
    // SAFETY: the caller keeps the code buffer valid and unmodified while the result exists.
    let matrix = unsafe { GenotypeMatrix::from_borrowed_codes(sample_meta, locus_meta, codes) }
        .map_err(|e| ViewError::Malformed(e.to_string()))?;
    Ok(BorrowedMatrix { matrix, samples, loci })
}

/// # Safety
/// `ptr` must be valid for `len` elements (or `len` 0).
unsafe fn slice<'a, T>(ptr: *const T, len: usize, what: &str) -> Result<&'a [T], ViewError> {
    if len == 0 {
        return Ok(&[]);
    }
    if ptr.is_null() {
        return Err(ViewError::Malformed(format!("`{what}` is null but its length is {len}")));
    }
    if !ptr.is_aligned() {
        return Err(ViewError::Malformed(format!("`{what}` is not aligned")));
    }
    // SAFETY: non-null, aligned, and the caller guarantees `len` readable elements.
    Ok(unsafe { std::slice::from_raw_parts(ptr, len) })
}

/// # Safety
/// As [`PgStr::as_bytes`].
unsafe fn text(s: PgStr) -> Result<String, ViewError> {
    // SAFETY: forwarded.
    let bytes = unsafe { s.as_bytes() };
    String::from_utf8(bytes.to_vec()).map_err(|_| ViewError::Malformed("a name or label is not UTF-8".into()))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn matrix() -> GenotypeMatrix {
        let samples = vec![
            SampleMeta { id: "a".into(), population: "P".into(), year: 2020 },
            SampleMeta { id: "b".into(), population: "P".into(), year: 2020 },
            SampleMeta { id: "c".into(), population: "Q".into(), year: 2019 },
        ];
        let loci = vec![
            LocusMeta {
                name: "L1".into(),
                alleles: vec!["1".into(), "2".into()],
                chromosome: Some("chr1".into()),
                position: Some(15_001),
            },
            LocusMeta { name: "L2".into(), alleles: vec!["A".into()], chromosome: None, position: None },
        ];
        let codes = [1, 1, 1, 2, 0, 0, 1, 1, 1, 1, 1, 1].into_iter().map(AlleleCode).collect();
        GenotypeMatrix::new(samples, loci, codes).unwrap()
    }

    /// Common practice: a view that crosses the boundary and back reads the same genotypes and
    /// metadata, and its codes are the host's buffer, not a copy.
    #[test]
    fn a_view_round_trips_without_copying_codes() {
        let m = matrix();
        let (samples, loci) = (vec![0usize, 2], vec![0usize, 1]);
        let view = GenotypeView::new(&m, &samples, &loci);
        let foreign = ForeignView::new(&view).unwrap();
        let ffi = foreign.as_ffi();
        // SAFETY: `foreign` and `m` outlive `back`.
        let back = unsafe { borrow_matrix(&ffi) }.unwrap();
        assert_eq!(back.matrix, m);
        assert_eq!(back.matrix.codes().as_ptr(), m.codes().as_ptr(), "codes are borrowed, not copied");
        let v = back.view();
        assert_eq!(v.n_samples(), 2);
        assert_eq!(v.sample(1).id, "c");
        assert_eq!(v.genotype(0, 0), Some((AlleleCode(1), AlleleCode(1))));
        assert_eq!(v.locus(0).chromosome.as_deref(), Some("chr1"));
        assert_eq!(v.locus(1).chromosome, None);
        assert_eq!(v.locus(0).position, Some(15_001));
        assert_eq!(v.locus(1).position, None);
    }

    #[test]
    fn malformed_views_are_refused() {
        let m = matrix();
        let (samples, loci) = (vec![0usize], vec![0usize]);
        let foreign = ForeignView::new(&GenotypeView::new(&m, &samples, &loci)).unwrap();
        let mut ffi = foreign.as_ffi();
        let bad = [7u32];
        ffi.active_samples = bad.as_ptr();
        // SAFETY: all pointers valid; only an index is out of range.
        let err = unsafe { borrow_matrix(&ffi) }.unwrap_err();
        assert_eq!(err.to_string(), "the genotype view is malformed: sample index 7 is out of range (0..3)");
        ffi.active_samples = std::ptr::null();
        // SAFETY: the null pointer is detected before use.
        let err = unsafe { borrow_matrix(&ffi) }.unwrap_err();
        assert_eq!(err.to_string(), "the genotype view is malformed: `active_samples` is null but its length is 1");
    }

    /// Common practice: what a host writes is what a plugin reads.
    #[test]
    fn request_json_reads_back() {
        let m = matrix();
        let (s, l) = (m.all_sample_indices(), m.all_locus_indices());
        let params: Params = [("k".to_string(), serde_json::json!([1, 2]))].into_iter().collect();
        let assessment = AssessmentInfo { title: "t".into(), seed: 3, ..AssessmentInfo::default() };
        let ctx = StepContext {
            view: m.full_view(&s, &l),
            params: &params,
            seed: Seed(11),
            earlier: &[],
            assessment: &assessment,
            input_findings: &[],
        };
        let back: RunRequest = serde_json::from_slice(&request_json(&ctx).unwrap()).unwrap();
        assert_eq!(back, RunRequest { params, seed: 11, earlier: vec![], assessment, input_findings: vec![] });
    }

    #[test]
    fn requests_ignore_unknown_fields() {
        let r: RunRequest = serde_json::from_str(r#"{"params":{"k":1},"seed":7,"future":true}"#).unwrap();
        assert_eq!(r.seed(), Seed(7));
        assert_eq!(r.params["k"], serde_json::json!(1));
    }
}
