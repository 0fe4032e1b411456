//! A deliberately misbehaving test plugin: its `mode` parameter selects how `run` goes wrong,
//! so the host's handling of each failure can be tested with one library.
//!
//! Modes: `ok` (a one-row table of sample counts), `error` (a step error), `panic`, `segfault`,
//! `abort`, `hang`, `invalid-json` (returns bytes that are not JSON) and `ragged` (a table whose
//! second row is short). `describe` uses the SDK unchanged; `run` is hand-wired so that
//! `invalid-json` can bypass the SDK's serialisation.
//!
//! Modes that try what a sandboxed worker must not do: `read-outside` (reads the file named by
//! `target`), `write-home` (writes a file into `$HOME`), `network` (opens a UDP socket on the
//! loopback address), `allocate` (allocates 64 MiB blocks without bound, up to 2 GiB) and `fork`
//! (starts a child process). Each returns the OS's refusal as a step error, and the usual
//! one-row table when nothing stopped it.

use popgauge_abi::ffi::{ABI_VERSION, PgBuf, PgGenotypeView, PgPlugin, PgStr, STATUS_OK};
use popgauge_abi::{Cell, Descriptor, ParamKind, Step, StepContext, StepError, StepOutput, Table};
use serde_json::json;

/// The modes, in the order the descriptor lists them.
const MODES: &[&str] = &[
    "ok",
    "error",
    "panic",
    "segfault",
    "abort",
    "hang",
    "invalid-json",
    "ragged",
    "read-outside",
    "write-home",
    "network",
    "allocate",
    "fork",
];

/// The misbehaving step.
#[derive(Debug, Default)]
pub struct Misbehave;

impl Step for Misbehave {
    fn descriptor(&self) -> Descriptor {
        Descriptor::new("misbehave", "0.1.0", "Test plugin that fails in the way its mode says")
            .param(
                "mode",
                ParamKind::Choice { choices: MODES.iter().map(|m| m.to_string()).collect() },
                json!("ok"),
                "how to fail",
            )
            .param("target", ParamKind::TextList { choices: Vec::new() }, json!([]), "the file `read-outside` reads")
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
            "read-outside" => read_outside(ctx)?,
            "write-home" => write_home()?,
            "network" => {
                std::net::UdpSocket::bind("127.0.0.1:0")
                    .map_err(|e| StepError::new(format!("cannot open a socket: {e}")))?;
            }
            "allocate" => allocate()?,
            "fork" => fork()?,
            _ => {}
        }
        let mut output = StepOutput::default();
        output.tables.insert("counts".into(), table);
        Ok(output)
    }
}

fn read_outside(ctx: &StepContext<'_>) -> Result<(), StepError> {
    let targets = ctx.params.get("target").and_then(|t| t.as_array()).cloned().unwrap_or_default();
    for path in targets.iter().filter_map(|t| t.as_str()) {
        std::fs::read(path).map_err(|e| StepError::new(format!("cannot read {path}: {e}")))?;
    }
    Ok(())
}

fn write_home() -> Result<(), StepError> {
    let home = std::env::var("HOME").map_err(|_| StepError::new("HOME is not set"))?;
    let path = format!("{home}/misbehave-was-here.txt");
    std::fs::write(&path, b"written by a plugin\n").map_err(|e| StepError::new(format!("cannot write {path}: {e}")))
}

/// Allocates and fills 64 MiB blocks until refused; stops by itself at 2 GiB so that a run
/// without a memory limit does not take the machine's memory.
fn allocate() -> Result<(), StepError> {
    const BLOCK: usize = 64 << 20;
    let mut blocks: Vec<Vec<u8>> = Vec::new();
    while blocks.len() * BLOCK < (2 << 30) {
        blocks.push(vec![1u8; BLOCK]);
    }
    std::hint::black_box(&blocks);
    Ok(())
}

fn fork() -> Result<(), StepError> {
    // SAFETY: the child calls only `_exit`, which is async-signal-safe.
    match unsafe { libc::fork() } {
        -1 => Err(StepError::new(format!("cannot start a process: {}", std::io::Error::last_os_error()))),
        // SAFETY: in the child, leave at once without running any of the parent's code.
        0 => unsafe { libc::_exit(0) },
        child => {
            let mut status = 0;
            // SAFETY: waits for the child this call started.
            unsafe { libc::waitpid(child, &mut status, 0) };
            Ok(())
        }
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
