//! The Rust SDK for external steps: implement [`crate::Step`] as a built-in step does, then
//! call [`export_step!`](crate::export_step) once.
//!
//! ```ignore
//! #[derive(Default)]
//! struct MyStep;
//! impl popgauge_abi::Step for MyStep { /* descriptor() and run() */ }
//! popgauge_abi::export_step!(MyStep);
//! ```
//!
//! The macro exports `popgauge_plugin_entry` and a static [`PgPlugin`](crate::ffi::PgPlugin)
//! table whose functions forward to [`describe`], [`run`] and [`free_buf`] here. Every one of
//! them runs the step inside `catch_unwind`, so a panic never unwinds across the C boundary: it
//! becomes [`STATUS_PANIC`] with the panic message. A quiet panic hook keeps the message out of
//! the host's stderr while a call is in progress (a cdylib has its own copy of std and its own
//! hook). A library built with `panic = "abort"` cannot be caught; the host's default
//! process isolation still contains it.

use std::cell::{Cell, RefCell};
use std::panic::{AssertUnwindSafe, catch_unwind};
use std::sync::Once;

use crate::ffi::{PgBuf, PgGenotypeView, PgStr, RunRequest, STATUS_OK, STATUS_PANIC, STATUS_STEP_ERROR, borrow_matrix};
use crate::step::{Step, StepContext};

/// Exports a type implementing [`Step`] and [`Default`] as a popgauge plugin library.
///
/// Use it once, at the root of a `crate-type = ["cdylib"]` crate.
#[macro_export]
macro_rules! export_step {
    ($step:ty) => {
        const _: () = {
            fn __popgauge_step() -> &'static $step {
                static STEP: ::std::sync::OnceLock<$step> = ::std::sync::OnceLock::new();
                STEP.get_or_init(<$step as ::core::default::Default>::default)
            }

            unsafe extern "C" fn __popgauge_describe(out: *mut $crate::ffi::PgBuf) -> i32 {
                // SAFETY: the host passes a writable `out`, as the ABI requires.
                unsafe { $crate::sdk::describe(__popgauge_step, out) }
            }

            unsafe extern "C" fn __popgauge_run(
                view: *const $crate::ffi::PgGenotypeView,
                request: $crate::ffi::PgStr,
                out: *mut $crate::ffi::PgBuf,
            ) -> i32 {
                // SAFETY: the host passes a valid view, request and `out`, as the ABI requires.
                unsafe { $crate::sdk::run(__popgauge_step, view, request, out) }
            }

            static TABLE: $crate::ffi::PgPlugin = $crate::ffi::PgPlugin {
                abi_version: $crate::ffi::ABI_VERSION,
                reserved: 0,
                describe: Some(__popgauge_describe),
                run: Some(__popgauge_run),
                free_buf: Some($crate::sdk::free_buf),
            };

            /// The plugin's entry symbol (see `popgauge_plugin.h`).
            #[unsafe(no_mangle)]
            pub extern "C" fn popgauge_plugin_entry() -> *const $crate::ffi::PgPlugin {
                &TABLE
            }
        };
    };
}

thread_local! {
    static IN_PLUGIN_CALL: Cell<bool> = const { Cell::new(false) };
    static LAST_PANIC: RefCell<Option<String>> = const { RefCell::new(None) };
}

/// Installs (once) a panic hook that records the message of a panic inside a plugin call
/// instead of printing it; panics elsewhere go to the previous hook.
fn install_quiet_hook() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            if IN_PLUGIN_CALL.with(Cell::get) {
                let message = panic_text(info.payload());
                let text = match info.location() {
                    Some(at) => format!("panicked at {}:{}:{}: {message}", at.file(), at.line(), at.column()),
                    None => format!("panicked: {message}"),
                };
                LAST_PANIC.with(|p| *p.borrow_mut() = Some(text));
            } else {
                previous(info);
            }
        }));
    });
}

fn panic_text(payload: &(dyn std::any::Any + Send)) -> String {
    payload
        .downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "a panic without a message".into())
}

/// Runs `body` with panics caught; writes its bytes into `out` and returns the status.
///
/// # Safety
/// `out` must be null or writable.
unsafe fn guarded(out: *mut PgBuf, body: impl FnOnce() -> (i32, Vec<u8>)) -> i32 {
    install_quiet_hook();
    IN_PLUGIN_CALL.with(|c| c.set(true));
    let caught = catch_unwind(AssertUnwindSafe(body));
    IN_PLUGIN_CALL.with(|c| c.set(false));
    let (status, bytes) = caught.unwrap_or_else(|payload| {
        let recorded = LAST_PANIC.with(|p| p.borrow_mut().take());
        (STATUS_PANIC, recorded.unwrap_or_else(|| format!("panicked: {}", panic_text(payload.as_ref()))).into_bytes())
    });
    if out.is_null() {
        return status;
    }
    let mut bytes = std::mem::ManuallyDrop::new(bytes);
    // SAFETY: `out` is non-null and writable (caller); ownership of the allocation passes to
    // the host, which returns it through `free_buf`.
    unsafe {
        out.write(PgBuf { ptr: bytes.as_mut_ptr(), len: bytes.len() as u64, capacity: bytes.capacity() as u64 });
    }
    status
}

/// `describe` of the exported table: the step's descriptor as JSON.
///
/// # Safety
/// `out` must be null or writable.
pub unsafe fn describe<S: Step>(step: fn() -> &'static S, out: *mut PgBuf) -> i32 {
    // SAFETY: forwarded.
    unsafe {
        guarded(out, || match serde_json::to_vec(&step().descriptor()) {
            Ok(json) => (STATUS_OK, json),
            Err(e) => (STATUS_STEP_ERROR, format!("the descriptor cannot be written as JSON: {e}").into_bytes()),
        })
    }
}

/// `run` of the exported table: rebuilds the view (codes borrowed), parses the request, runs
/// the step and writes its output as JSON.
///
/// # Safety
/// `view` must point to a valid [`PgGenotypeView`] whose memory stays unmodified during the
/// call, `request` must be readable, and `out` null or writable.
pub unsafe fn run<S: Step>(
    step: fn() -> &'static S,
    view: *const PgGenotypeView,
    request: PgStr,
    out: *mut PgBuf,
) -> i32 {
    // SAFETY: forwarded.
    unsafe {
        guarded(out, || {
            // SAFETY: the host's view and request are valid for the call (ABI contract).
            match run_inner(step(), view, request) {
                Ok(json) => (STATUS_OK, json),
                Err(message) => (STATUS_STEP_ERROR, message.into_bytes()),
            }
        })
    }
}

fn run_inner<S: Step>(step: &S, view: *const PgGenotypeView, request: PgStr) -> Result<Vec<u8>, String> {
    if view.is_null() {
        return Err("the host passed no genotype view".into());
    }
    // SAFETY: `run`'s contract: the view and request are valid for this call.
    let (borrowed, request_bytes) = unsafe { (borrow_matrix(&*view).map_err(|e| e.to_string())?, request.as_bytes()) };
    let request: RunRequest = serde_json::from_slice(request_bytes)
        .map_err(|e| format!("the host's request is not what this plugin's SDK expects: {e}"))?;
    let ctx = StepContext {
        view: borrowed.view(),
        params: &request.params,
        seed: request.seed(),
        earlier: &request.earlier,
        assessment: &request.assessment,
        input_findings: &request.input_findings,
    };
    let output = step.run(&ctx).map_err(|e| e.message)?;
    serde_json::to_vec(&output).map_err(|e| format!("the step's output cannot be written as JSON: {e}"))
}

/// `free_buf` of the exported table: releases a buffer written by [`describe`] or [`run`].
///
/// # Safety
/// `buf` must come from this library's `describe` or `run` and be freed once.
pub unsafe extern "C" fn free_buf(buf: PgBuf) {
    if buf.ptr.is_null() {
        return;
    }
    // SAFETY: `buf` was made from a `Vec<u8>` by `guarded` with this pointer, length and
    // capacity, and is freed once (caller).
    drop(unsafe { Vec::from_raw_parts(buf.ptr, buf.len as usize, buf.capacity as usize) });
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ffi::{ForeignView, STATUS_PANIC};
    use crate::{
        AlleleCode, Cell as TableCell, Descriptor, GenotypeMatrix, LocusMeta, SampleMeta, StepError, StepOutput, Table,
    };

    #[derive(Default)]
    struct CountOrPanic;

    impl Step for CountOrPanic {
        fn descriptor(&self) -> Descriptor {
            Descriptor::new("count-or-panic", "0.1.0", "test step")
        }
        fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
            match ctx.seed.0 {
                1 => panic!("boom {}", 42),
                2 => Err(StepError::new("refused")),
                _ => {
                    let mut t = Table::new(&["n"]);
                    t.push_row(vec![TableCell::Int(ctx.view.n_samples() as i64)])?;
                    let mut out = StepOutput::default();
                    out.tables.insert("counts".into(), t);
                    Ok(out)
                }
            }
        }
    }

    fn step() -> &'static CountOrPanic {
        &CountOrPanic
    }

    fn call(seed: u64) -> (i32, String) {
        let samples = vec![SampleMeta { id: "a".into(), population: "P".into(), year: 1 }];
        let loci = vec![LocusMeta { name: "L".into(), alleles: vec!["x".into()], chromosome: None, position: None }];
        let m = GenotypeMatrix::new(samples, loci, vec![AlleleCode(1), AlleleCode(1)]).unwrap();
        let (s, l) = (m.all_sample_indices(), m.all_locus_indices());
        let foreign = ForeignView::new(&m.full_view(&s, &l)).unwrap();
        let ffi = foreign.as_ffi();
        let request = format!(r#"{{"params":{{}},"seed":{seed}}}"#);
        let mut out = PgBuf::EMPTY;
        // SAFETY: all pointers are valid for the call.
        let status = unsafe { run(step, &ffi, PgStr::new(&request), &mut out) };
        // SAFETY: `out` was written by `run`.
        let text = String::from_utf8(unsafe { PgStr { ptr: out.ptr, len: out.len }.as_bytes() }.to_vec()).unwrap();
        // SAFETY: freed once.
        unsafe { free_buf(out) };
        (status, text)
    }

    /// Common practice: results, step errors and panics each come back with their status.
    #[test]
    fn statuses_and_panic_capture() {
        assert_eq!(
            call(0),
            (STATUS_OK, r#"{"tables":{"counts":{"columns":["n"],"rows":[[1]]}},"findings":[],"citations":[]}"#.into())
        );
        assert_eq!(call(2), (STATUS_STEP_ERROR, "refused".into()));
        let (status, message) = call(1);
        assert_eq!(status, STATUS_PANIC);
        assert!(message.starts_with("panicked at plugins/abi/src/sdk.rs:"), "{message}");
        assert!(message.ends_with(": boom 42"), "{message}");
    }

    #[test]
    fn describe_writes_the_descriptor() {
        let mut out = PgBuf::EMPTY;
        // SAFETY: `out` is writable.
        let status = unsafe { describe(step, &mut out) };
        // SAFETY: written by `describe`.
        let bytes = unsafe { PgStr { ptr: out.ptr, len: out.len }.as_bytes() }.to_vec();
        // SAFETY: freed once.
        unsafe { free_buf(out) };
        assert_eq!(status, STATUS_OK);
        let d: Descriptor = serde_json::from_slice(&bytes).unwrap();
        assert_eq!(d.uses, "count-or-panic");
    }
}
