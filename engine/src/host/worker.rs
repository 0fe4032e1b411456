//! Process isolation: the parent's side (spawn `popgauge plugin-worker`, send the request, wait
//! with a time limit, read the answer) and the child's side ([`serve`]).
//!
//! The genotype codes travel through a private file the parent writes once per run and the
//! child maps into memory, so neither side copies them per call; everything else (metadata,
//! parameters, earlier results) travels as JSON on the child's stdin, and the answer as JSON on
//! its stdout. The child moves its own stdout aside before loading the library, so a plugin
//! that prints cannot corrupt the answer.

use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, ExitStatus, Stdio};
use std::time::{Duration, Instant};

use popgauge_abi::{AlleleCode, Descriptor, GenotypeMatrix, GenotypeView, LocusMeta, SampleMeta, StepError};
use serde::{Deserialize, Serialize};

use super::library::LoadedLibrary;
use super::{LoadError, PluginScratch, parse_descriptor};

/// Environment variable naming the executable to run as the worker (default: this executable).
/// Benchmarks and embedding programs set it to a `popgauge` binary.
pub const WORKER_ENV: &str = "POPGAUGE_PLUGIN_WORKER";

/// The genotype codes of one matrix, written once for the worker to map.
#[derive(Debug)]
pub struct GenotypeFile {
    /// Identity of the matrix buffer it was written from (address, length).
    key: (usize, usize),
    path: PathBuf,
}

#[derive(Debug, Serialize, Deserialize)]
struct WorkerRequest {
    library: PathBuf,
    shown: String,
    #[serde(flatten)]
    action: Action,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(tag = "action", rename_all = "kebab-case")]
enum Action {
    Describe,
    Run(RunPayload),
}

#[derive(Debug, Serialize, Deserialize)]
struct RunPayload {
    genotypes: PathBuf,
    samples: Vec<WireSample>,
    loci: Vec<WireLocus>,
    active_samples: Vec<usize>,
    active_loci: Vec<usize>,
    request: String,
}

#[derive(Debug, Serialize, Deserialize)]
struct WireSample {
    id: String,
    population: String,
    year: i32,
}

#[derive(Debug, Serialize, Deserialize)]
struct WireLocus {
    name: String,
    alleles: Vec<String>,
    chromosome: Option<String>,
    position: Option<u64>,
}

#[derive(Debug, Serialize, Deserialize)]
#[serde(tag = "answer", rename_all = "kebab-case")]
enum WorkerResponse {
    /// The library's status and bytes, from `describe` or `run`.
    Called { status: i32, output: String },
    /// The library was refused while loading.
    Refused { error: LoadError },
    /// The worker could not do what was asked (bad request, unreadable genotype file).
    Failed { message: String },
}

/// How a child ended without answering.
enum ChildFailure {
    Spawn(String),
    Crashed(String),
    TimedOut(Duration),
    Exited(String),
    Garbled(String),
}

impl ChildFailure {
    fn reason(&self) -> String {
        match self {
            ChildFailure::Spawn(e) => format!("could not be started in a worker process ({e})"),
            ChildFailure::Crashed(how) => format!("crashed ({how})"),
            ChildFailure::TimedOut(limit) => format!("did not finish within {} s and was stopped", limit.as_secs_f64()),
            ChildFailure::Exited(how) => how.clone(),
            ChildFailure::Garbled(e) => format!("answered with something that is not the worker protocol ({e})"),
        }
    }
}

/// Asks a child to load the library and describe it.
///
/// # Errors
/// The child's [`LoadError`], or [`LoadError::Worker`] when it crashed or hung.
pub fn describe_in_child(library: &Path, shown: &str, timeout: Duration) -> Result<Descriptor, LoadError> {
    let request = WorkerRequest { library: library.into(), shown: shown.into(), action: Action::Describe };
    let worker_failed = |f: ChildFailure| LoadError::Worker { path: shown.into(), reason: f.reason() };
    match call_child(&request, timeout).map_err(worker_failed)? {
        WorkerResponse::Called { status: popgauge_abi::ffi::STATUS_OK, output } => {
            parse_descriptor(output.as_bytes(), shown)
        }
        WorkerResponse::Called { output, .. } => {
            Err(LoadError::Descriptor { path: shown.into(), reason: format!("describing itself failed: {output}") })
        }
        WorkerResponse::Refused { error } => Err(error),
        WorkerResponse::Failed { message } => Err(LoadError::Worker { path: shown.into(), reason: message }),
    }
}

/// One `run` in a child.
pub struct RunCall<'a> {
    /// The verified library copy.
    pub library: &'a Path,
    /// The path as the recipe writes it, for messages.
    pub shown: &'a str,
    /// Where the genotype file lives.
    pub scratch: &'a PluginScratch,
    /// The data in play.
    pub view: &'a GenotypeView<'a>,
    /// The request JSON.
    pub request: &'a [u8],
    /// The time limit.
    pub timeout: Duration,
}

/// Runs the step in a child; returns the library's status and bytes.
///
/// # Errors
/// A [`StepError`] saying how the child failed (crash with the signal, time limit, …).
pub fn run_in_child(call: RunCall<'_>) -> Result<(i32, Vec<u8>), StepError> {
    let genotypes = genotype_file(call.scratch, call.view.matrix())
        .map_err(|e| StepError::new(format!("the genotype file for the plugin worker cannot be written: {e}")))?;
    let matrix = call.view.matrix();
    let payload = RunPayload {
        genotypes,
        samples: matrix
            .samples()
            .iter()
            .map(|s| WireSample { id: s.id.clone(), population: s.population.clone(), year: s.year })
            .collect(),
        loci: matrix
            .loci()
            .iter()
            .map(|l| WireLocus {
                name: l.name.clone(),
                alleles: l.alleles.clone(),
                chromosome: l.chromosome.clone(),
                position: l.position,
            })
            .collect(),
        active_samples: call.view.sample_indices().to_vec(),
        active_loci: call.view.locus_indices().to_vec(),
        request: String::from_utf8_lossy(call.request).into_owned(),
    };
    let request =
        WorkerRequest { library: call.library.into(), shown: call.shown.into(), action: Action::Run(payload) };
    match call_child(&request, call.timeout).map_err(|f| StepError::new(format!("the plugin {}", f.reason())))? {
        WorkerResponse::Called { status, output } => Ok((status, output.into_bytes())),
        WorkerResponse::Refused { error } => Err(StepError::new(error.to_string())),
        WorkerResponse::Failed { message } => Err(StepError::new(format!("the plugin worker failed: {message}"))),
    }
}

/// The scratch's genotype file for `matrix`, written on first use.
fn genotype_file(scratch: &PluginScratch, matrix: &GenotypeMatrix) -> std::io::Result<PathBuf> {
    let codes = matrix.codes();
    let key = (codes.as_ptr() as usize, codes.len());
    let mut slot = scratch.genotypes.lock().map_err(|_| std::io::Error::other("a previous write failed"))?;
    if let Some(file) = slot.as_ref().filter(|f| f.key == key) {
        return Ok(file.path.clone());
    }
    let path = scratch.dir().join(format!("genotypes-{}.u16", key.1));
    // SAFETY: `AlleleCode` is `repr(transparent)` over `u16`, which has no padding, so the
    // buffer is `2 × len` initialised bytes.
    let bytes = unsafe { std::slice::from_raw_parts(codes.as_ptr().cast::<u8>(), std::mem::size_of_val(codes)) };
    std::fs::write(&path, bytes)?;
    *slot = Some(GenotypeFile { key, path: path.clone() });
    Ok(path)
}

/// The worker executable.
fn worker_executable() -> std::io::Result<PathBuf> {
    match std::env::var_os(WORKER_ENV) {
        Some(path) => Ok(PathBuf::from(path)),
        None => std::env::current_exe(),
    }
}

/// Spawns the worker, sends `request`, waits at most `timeout` and reads its answer.
fn call_child(request: &WorkerRequest, timeout: Duration) -> Result<WorkerResponse, ChildFailure> {
    let input = serde_json::to_vec(request).map_err(|e| ChildFailure::Spawn(e.to_string()))?;
    let executable = worker_executable().map_err(|e| ChildFailure::Spawn(e.to_string()))?;
    // An interrupt of the run kills the worker (see `interrupt`).
    let mut child = crate::interrupt::spawn_worker(
        Command::new(executable)
            .arg("plugin-worker")
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped()),
    )
    .map_err(|e| ChildFailure::Spawn(e.to_string()))?;
    let mut stdin = child.stdin.take();
    let writer = std::thread::spawn(move || {
        // A child that dies before reading closes the pipe; its exit status tells why.
        if let Some(pipe) = stdin.as_mut() {
            let _ = pipe.write_all(&input);
        }
    });
    let stdout = child.stdout.take().map(read_in_thread);
    let stderr = child.stderr.take().map(read_in_thread);
    let status = wait_with_limit(&child, timeout)?;
    let _ = writer.join();
    let output = stdout.and_then(|h| h.join().ok()).unwrap_or_default();
    let errors = stderr.and_then(|h| h.join().ok()).unwrap_or_default();
    if let Some(how) = signal_of(&status) {
        return Err(ChildFailure::Crashed(how));
    }
    if !status.success() {
        let said = String::from_utf8_lossy(&errors).lines().last().unwrap_or("").trim().to_string();
        let code = status.code().map_or_else(|| "?".into(), |c| c.to_string());
        return Err(ChildFailure::Exited(if said.is_empty() {
            format!("exited with code {code} without answering")
        } else {
            format!("exited with code {code} without answering: {said}")
        }));
    }
    serde_json::from_slice(&output).map_err(|e| ChildFailure::Garbled(e.to_string()))
}

fn read_in_thread(mut pipe: impl Read + Send + 'static) -> std::thread::JoinHandle<Vec<u8>> {
    std::thread::spawn(move || {
        let mut bytes = Vec::new();
        let _ = pipe.read_to_end(&mut bytes);
        bytes
    })
}

fn wait_with_limit(child: &crate::interrupt::Worker, timeout: Duration) -> Result<ExitStatus, ChildFailure> {
    let started = Instant::now();
    let mut pause = Duration::from_millis(1);
    loop {
        match child.try_wait() {
            Ok(Some(status)) => return Ok(status),
            Ok(None) if started.elapsed() >= timeout => {
                let _ = child.kill();
                return Err(ChildFailure::TimedOut(timeout));
            }
            Ok(None) => {
                std::thread::sleep(pause);
                pause = (pause * 2).min(Duration::from_millis(20));
            }
            Err(e) => return Err(ChildFailure::Spawn(e.to_string())),
        }
    }
}

/// "signal 11, segmentation fault" when the child was ended by a signal.
#[cfg(unix)]
fn signal_of(status: &ExitStatus) -> Option<String> {
    use std::os::unix::process::ExitStatusExt;
    let signal = status.signal()?;
    let name = match signal {
        4 => "illegal instruction",
        5 => "trace trap",
        6 => "aborted",
        7 => "bus error",
        8 => "floating-point exception",
        9 => "killed",
        11 => "segmentation fault",
        13 => "broken pipe",
        15 => "terminated",
        _ => "",
    };
    Some(if name.is_empty() { format!("signal {signal}") } else { format!("signal {signal}, {name}") })
}

#[cfg(not(unix))]
fn signal_of(_status: &ExitStatus) -> Option<String> {
    None
}

/// The child's side: reads one request on stdin, answers on stdout. Returns the exit code.
pub fn serve() -> std::process::ExitCode {
    let answer_to = match set_stdout_aside() {
        Ok(out) => out,
        Err(e) => {
            eprintln_worker(&format!("cannot set stdout aside: {e}"));
            return std::process::ExitCode::from(2);
        }
    };
    let mut input = Vec::new();
    let response = match std::io::stdin().read_to_end(&mut input) {
        Ok(_) => match serde_json::from_slice::<WorkerRequest>(&input) {
            Ok(request) => answer(request),
            Err(e) => WorkerResponse::Failed { message: format!("unreadable request: {e}") },
        },
        Err(e) => WorkerResponse::Failed { message: format!("cannot read the request: {e}") },
    };
    let mut out = answer_to;
    match serde_json::to_writer(&mut out, &response).map(|_| out.flush()) {
        Ok(Ok(())) => std::process::ExitCode::SUCCESS,
        _ => std::process::ExitCode::from(2),
    }
}

fn eprintln_worker(message: &str) {
    let _ = writeln!(std::io::stderr(), "popgauge plugin-worker: {message}");
}

/// Moves stdout to a new descriptor for the answer and points descriptor 1 at stderr.
#[cfg(unix)]
fn set_stdout_aside() -> std::io::Result<std::fs::File> {
    use std::os::fd::FromRawFd;
    // SAFETY: `dup` and `dup2` on the process's own standard descriptors; the new descriptor is
    // owned by the returned `File` alone.
    unsafe {
        let answer = libc::dup(1);
        if answer < 0 || libc::dup2(2, 1) < 0 {
            return Err(std::io::Error::last_os_error());
        }
        Ok(std::fs::File::from_raw_fd(answer))
    }
}

#[cfg(not(unix))]
fn set_stdout_aside() -> std::io::Result<std::fs::File> {
    Err(std::io::Error::other("process isolation needs a Unix system; use isolation = \"in-process\""))
}

fn answer(request: WorkerRequest) -> WorkerResponse {
    let library = match LoadedLibrary::open(&request.library, &request.shown) {
        Ok(library) => library,
        Err(error) => return WorkerResponse::Refused { error },
    };
    match request.action {
        Action::Describe => {
            let (status, bytes) = library.describe_raw();
            WorkerResponse::Called { status, output: String::from_utf8_lossy(&bytes).into_owned() }
        }
        Action::Run(payload) => run_payload(&library, payload),
    }
}

fn run_payload(library: &LoadedLibrary, payload: RunPayload) -> WorkerResponse {
    let failed = |message: String| WorkerResponse::Failed { message };
    let file = match std::fs::File::open(&payload.genotypes) {
        Ok(f) => f,
        Err(e) => return failed(format!("cannot open the genotype file: {e}")),
    };
    let length = file.metadata().map(|m| m.len()).unwrap_or(0);
    let map = if length == 0 {
        None
    } else {
        // SAFETY: the file is private to this run (a 0700 temporary folder) and the parent does
        // not change it while the child lives.
        match unsafe { memmap2::Mmap::map(&file) } {
            Ok(map) => Some(map),
            Err(e) => return failed(format!("cannot map the genotype file: {e}")),
        }
    };
    let bytes: &[u8] = map.as_deref().unwrap_or(&[]);
    // SAFETY: any two bytes are a valid `u16`; alignment is checked through the prefix.
    let (prefix, codes, suffix) = unsafe { bytes.align_to::<u16>() };
    if !prefix.is_empty() || !suffix.is_empty() {
        return failed("the genotype file is not a whole number of aligned codes".into());
    }
    // SAFETY: `AlleleCode` is `repr(transparent)` over `u16`.
    let codes: &[AlleleCode] = unsafe { std::slice::from_raw_parts(codes.as_ptr().cast(), codes.len()) };
    let samples =
        payload.samples.into_iter().map(|s| SampleMeta { id: s.id, population: s.population, year: s.year }).collect();
    let loci = payload
        .loci
        .into_iter()
        .map(|l| LocusMeta { name: l.name, alleles: l.alleles, chromosome: l.chromosome, position: l.position })
        .collect();
    // SAFETY: `map` outlives `matrix` (both local; `matrix` is declared later, dropped first).
    let matrix = match unsafe { GenotypeMatrix::from_borrowed_codes(samples, loci, codes) } {
        Ok(m) => m,
        Err(e) => return failed(format!("the genotype file does not fit the metadata: {e}")),
    };
    let in_range = |indices: &[usize], n: usize| indices.iter().all(|&i| i < n);
    if !in_range(&payload.active_samples, matrix.samples().len())
        || !in_range(&payload.active_loci, matrix.loci().len())
    {
        return failed("an active sample or locus index is out of range".into());
    }
    let view = GenotypeView::new(&matrix, &payload.active_samples, &payload.active_loci);
    match library.run(&view, payload.request.as_bytes()) {
        Ok((status, bytes)) => WorkerResponse::Called { status, output: String::from_utf8_lossy(&bytes).into_owned() },
        Err(e) => failed(e.message),
    }
}
