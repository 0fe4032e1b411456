//! Process isolation: the parent's side (spawn `popgauge plugin-worker`, send the request, wait
//! with a time limit, read the answer) and the child's side ([`serve`]).
//!
//! The genotype codes travel through a private file the parent writes once per run and the
//! child maps into memory, so neither side copies them per call; everything else (metadata,
//! parameters, earlier results) travels as JSON on the child's stdin, and the answer as JSON on
//! its stdout. The child moves its own stdout aside before loading the library, so a plugin
//! that prints cannot corrupt the answer.
//!
//! Each call gets its own scratch folder (the child's working folder and `TMPDIR`, removed
//! after the call), and the child restricts itself ([`super::sandbox`]) before it loads the
//! library: it reports what was in force with its answer.

use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, ExitStatus, Stdio};
use std::time::{Duration, Instant};

use popgauge_abi::{AlleleCode, Descriptor, GenotypeMatrix, GenotypeView, LocusMeta, SampleMeta, StepError};
use serde::{Deserialize, Serialize};

use super::library::LoadedLibrary;
use super::sandbox::{SandboxPlan, SandboxState};
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
    sandbox: SandboxPlan,
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
    /// The library's status and bytes, from `describe` or `run`, and the sandbox it ran in.
    Called { status: i32, output: String, sandbox: SandboxState },
    /// The library was refused while loading.
    Refused { error: LoadError },
    /// The worker could not do what was asked (bad request, unreadable genotype file).
    Failed { message: String },
}

/// How a child ended without answering.
enum ChildFailure {
    Spawn(String),
    Crashed(String),
    /// Stopped by the sandbox or a resource limit: what happened, and a `help:` text.
    Stopped {
        what: String,
        help: String,
    },
    TimedOut(Duration),
    Exited(String),
    Garbled(String),
}

impl ChildFailure {
    fn reason(&self) -> String {
        match self {
            ChildFailure::Spawn(e) => format!("could not be started in a worker process ({e})"),
            ChildFailure::Crashed(how) => format!("crashed ({how})"),
            ChildFailure::Stopped { what, help } => format!("{what}\n  help: {help}"),
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
pub fn describe_in_child(library: &Path, shown: &str, limits: Limits) -> Result<Descriptor, LoadError> {
    let worker_failed = |f: ChildFailure| LoadError::Worker { path: shown.into(), reason: f.reason() };
    let work = WorkFolder::beside(library).map_err(|e| worker_failed(ChildFailure::Spawn(e.to_string())))?;
    let request = WorkerRequest {
        library: library.into(),
        shown: shown.into(),
        sandbox: limits.plan(vec![library.into()], work.path()),
        action: Action::Describe,
    };
    match call_child(&request, limits.timeout).map_err(worker_failed)? {
        WorkerResponse::Called { status: popgauge_abi::ffi::STATUS_OK, output, .. } => {
            parse_descriptor(output.as_bytes(), shown)
        }
        WorkerResponse::Called { output, .. } => {
            Err(LoadError::Descriptor { path: shown.into(), reason: format!("describing itself failed: {output}") })
        }
        WorkerResponse::Refused { error } => Err(error),
        WorkerResponse::Failed { message } => Err(LoadError::Worker { path: shown.into(), reason: message }),
    }
}

/// The limits of a worker: wall-clock time and memory.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limits {
    /// The time limit of one call (wall clock).
    pub timeout: Duration,
    /// The limit of the worker's writable memory, in MiB.
    pub memory_mib: u64,
}

impl Limits {
    /// The sandbox of a call that may read `read` and write `work`. CPU time is limited to the
    /// time limit on every processor, so a worker left behind cannot spin for ever.
    fn plan(self, read: Vec<PathBuf>, work: &Path) -> SandboxPlan {
        let processors = std::thread::available_parallelism().map_or(1, |n| n.get() as u64);
        SandboxPlan {
            read,
            write: work.to_path_buf(),
            memory_bytes: self.memory_mib.saturating_mul(1 << 20),
            cpu_seconds: self.timeout.as_secs().max(1).saturating_mul(processors),
        }
    }
}

/// The scratch folder of one call: the child's working folder, removed after the call.
struct WorkFolder(tempfile::TempDir);

impl WorkFolder {
    /// A new folder beside the library copy (in the run's private plugin folder).
    fn beside(library: &Path) -> std::io::Result<WorkFolder> {
        let parent = library.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
        Ok(WorkFolder(tempfile::Builder::new().prefix("worker-").tempdir_in(parent)?))
    }

    fn path(&self) -> &Path {
        self.0.path()
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
    /// The time and memory limits.
    pub limits: Limits,
}

/// Runs the step in a child; returns the library's status and bytes and the sandbox it ran in.
///
/// # Errors
/// A [`StepError`] saying how the child failed (crash with the signal, time limit, …).
pub fn run_in_child(call: RunCall<'_>) -> Result<(i32, Vec<u8>, SandboxState), StepError> {
    let genotypes = genotype_file(call.scratch, call.view.matrix())
        .map_err(|e| StepError::new(format!("the genotype file for the plugin worker cannot be written: {e}")))?;
    let work = WorkFolder::beside(call.library)
        .map_err(|e| StepError::new(format!("the scratch folder for the plugin worker cannot be made: {e}")))?;
    let sandbox = call.limits.plan(vec![call.library.into(), genotypes.clone()], work.path());
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
        WorkerRequest { library: call.library.into(), shown: call.shown.into(), sandbox, action: Action::Run(payload) };
    match call_child(&request, call.limits.timeout).map_err(|f| StepError::new(format!("the plugin {}", f.reason())))? {
        WorkerResponse::Called { status, output, sandbox } => Ok((status, output.into_bytes(), sandbox)),
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
            .current_dir(&request.sandbox.write)
            .env("TMPDIR", &request.sandbox.write)
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
        return Err(stopped_by_sandbox(&status, &errors, &request.sandbox).unwrap_or(ChildFailure::Crashed(how)));
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

/// How a child ended by the sandbox or a resource limit is explained: a forbidden system call
/// (SIGSYS), the CPU time limit (SIGXCPU, or SIGKILL past the hard limit is not told apart from
/// other kills), an allocation refused under the memory limit (Rust's message, then SIGABRT).
#[cfg(unix)]
fn stopped_by_sandbox(status: &ExitStatus, errors: &[u8], plan: &SandboxPlan) -> Option<ChildFailure> {
    use std::os::unix::process::ExitStatusExt;
    let said = String::from_utf8_lossy(errors);
    let allocation = said.lines().rev().find(|l| l.starts_with("memory allocation of ")).map(str::trim);
    match status.signal()? {
        libc::SIGSYS => Some(ChildFailure::Stopped {
            what: "was stopped by the worker's sandbox (signal 31): it tried to open a network socket, start a process or program, or trace another process".into(),
            help: "a plugin step may only compute on the data it is given; ask the plugin's author what it tried to do".into(),
        }),
        libc::SIGXCPU => Some(ChildFailure::Stopped {
            what: format!("was stopped after {} s of CPU time, the worker's limit (signal 24)", plan.cpu_seconds),
            help: "raise `timeout_seconds` for this step if the plugin needs more time".into(),
        }),
        libc::SIGABRT if allocation.is_some() => Some(ChildFailure::Stopped {
            what: format!(
                "ran out of memory: {} (the worker's limit is {} MiB)",
                allocation.unwrap_or_default(),
                plan.memory_bytes >> 20
            ),
            help: "raise `memory_limit_mib` for this step if the plugin needs more memory".into(),
        }),
        _ => None,
    }
}

#[cfg(not(unix))]
fn stopped_by_sandbox(_status: &ExitStatus, _errors: &[u8], _plan: &SandboxPlan) -> Option<ChildFailure> {
    None
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
        24 => "CPU time limit exceeded",
        31 => "bad system call",
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
    // Before the library is loaded: its initialisers run inside the sandbox too.
    let sandbox = super::sandbox::apply(&request.sandbox);
    let library = match LoadedLibrary::open(&request.library, &request.shown) {
        Ok(library) => library,
        Err(error) => return WorkerResponse::Refused { error },
    };
    match request.action {
        Action::Describe => {
            let (status, bytes) = library.describe_raw();
            WorkerResponse::Called { status, output: String::from_utf8_lossy(&bytes).into_owned(), sandbox }
        }
        Action::Run(payload) => run_payload(&library, payload, sandbox),
    }
}

fn run_payload(library: &LoadedLibrary, payload: RunPayload, sandbox: SandboxState) -> WorkerResponse {
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
        Ok((status, bytes)) => {
            WorkerResponse::Called { status, output: String::from_utf8_lossy(&bytes).into_owned(), sandbox }
        }
        Err(e) => failed(e.message),
    }
}
