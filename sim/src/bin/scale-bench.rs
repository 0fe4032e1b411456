//! `scale-bench --out DIR [--popgauge PATH] [--threads N] [--verify] [--regenerate]`: the
//! genomic-scale benchmark. Writes the SNP-panel case ([`SnpPanel::benchmark`]: 20,000 SNPs ×
//! 1,200 samples, 6 populations × 2 years) into `DIR/case` unless it is already there, then
//! runs the real `popgauge` binary on it and prints, for each command, the wall time and the
//! peak resident memory of the child process (`wait4`'s `ru_maxrss`):
//!
//! - `popgauge check DIR/case` (reading the VCF, sample and population sheets, and the recipe);
//! - `popgauge run DIR/case --out DIR/out --force --quiet`, followed by the time of each step
//!   from `DIR/out/provenance.json` and the time before the first step (reading) and after the
//!   last (results, tables, document, hashes);
//! - with `--verify`, `popgauge verify DIR/out/provenance.json`.
//!
//! `popgauge` is looked for beside this program (`cargo build --release` first), unless
//! `--popgauge` names it. Not part of the test suite: a run takes minutes.

use std::error::Error;
use std::fs;
use std::os::unix::process::CommandExt;
use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode};
use std::time::{Duration, Instant};

use popgauge_sim::{SnpPanel, write_case};

const USAGE: &str = "usage: scale-bench --out DIR [--popgauge PATH] [--threads N] [--verify] [--regenerate]
  writes the 20,000 SNP × 1,200 sample case into DIR/case (unless present) and times
  `popgauge check` and `popgauge run` (and `popgauge verify` with --verify) on it";

/// The command line.
struct Options {
    out: PathBuf,
    popgauge: Option<PathBuf>,
    threads: Option<String>,
    verify: bool,
    regenerate: bool,
}

/// The internal mode in which this program only writes the case (see [`run`]).
const GENERATE: &str = "--generate-case-into";

fn main() -> ExitCode {
    let mut args = std::env::args().skip(1);
    if let (Some(GENERATE), Some(dir)) = (args.next().as_deref(), args.next()) {
        return match generate(Path::new(&dir)) {
            Ok(()) => ExitCode::SUCCESS,
            Err(error) => {
                eprintln!("error: {error}");
                ExitCode::FAILURE
            }
        };
    }
    let options = match parse(std::env::args().skip(1)) {
        Ok(options) => options,
        Err(message) => {
            eprintln!("error: {message}\n{USAGE}");
            return ExitCode::from(2);
        }
    };
    match run(&options) {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            eprintln!("error: {error}");
            ExitCode::FAILURE
        }
    }
}

fn parse(mut args: impl Iterator<Item = String>) -> Result<Options, String> {
    let mut options = Options { out: PathBuf::new(), popgauge: None, threads: None, verify: false, regenerate: false };
    let mut out = None;
    while let Some(arg) = args.next() {
        let mut value = |name: &str| args.next().ok_or(format!("{name} needs a value"));
        match arg.as_str() {
            "--out" => out = Some(PathBuf::from(value("--out")?)),
            "--popgauge" => options.popgauge = Some(PathBuf::from(value("--popgauge")?)),
            "--threads" => options.threads = Some(value("--threads")?),
            "--verify" => options.verify = true,
            "--regenerate" => options.regenerate = true,
            other => return Err(format!("unexpected argument `{other}`")),
        }
    }
    options.out = out.ok_or("--out DIR is required")?;
    Ok(options)
}

fn run(options: &Options) -> Result<(), Box<dyn Error>> {
    let popgauge = find_popgauge(options.popgauge.as_deref())?;
    let case = options.out.join("case");
    if options.regenerate || !case.join("case.toml").is_file() {
        // In a child process: a child started with fork counts from this process's resident
        // size in `ru_maxrss`, so the simulation's half gigabyte must not be held here.
        let status = Command::new(std::env::current_exe()?).arg(GENERATE).arg(&case).status()?;
        if !status.success() {
            return Err(format!("generating the case failed ({status})").into());
        }
    } else {
        println!("case: {} (already there; --regenerate to write it again)", case.display());
    }
    let threads: Vec<String> = options.threads.iter().flat_map(|n| ["--threads".to_string(), n.clone()]).collect();
    let case_arg = case.display().to_string();
    let out = options.out.join("out");
    let out_arg = out.display().to_string();
    timed(&popgauge, &["check", &case_arg])?.print("popgauge check (read and validate the inputs)");
    let mut run_args = vec!["run", case_arg.as_str(), "--out", out_arg.as_str(), "--force", "--quiet"];
    run_args.extend(threads.iter().map(String::as_str));
    timed(&popgauge, &run_args)?.print("popgauge run (full recipe and document)");
    print_step_times(&out.join("provenance.json"))?;
    if options.verify {
        let provenance = out.join("provenance.json").display().to_string();
        let mut verify_args = vec!["verify", provenance.as_str()];
        verify_args.extend(threads.iter().map(String::as_str));
        timed(&popgauge, &verify_args)?.print("popgauge verify (re-hash, re-run, re-typeset)");
    }
    Ok(())
}

/// `popgauge` beside this program, or the path given.
fn find_popgauge(given: Option<&Path>) -> Result<PathBuf, Box<dyn Error>> {
    let path = match given {
        Some(path) => path.to_path_buf(),
        None => std::env::current_exe()?.with_file_name(format!("popgauge{}", std::env::consts::EXE_SUFFIX)),
    };
    if path.is_file() {
        Ok(path)
    } else {
        Err(format!(
            "{} not found\n  help: build it first with `cargo build --release`, or name it with --popgauge PATH",
            path.display()
        )
        .into())
    }
}

fn generate(case: &Path) -> Result<(), Box<dyn Error>> {
    let panel = SnpPanel::benchmark();
    let start = Instant::now();
    let data = panel.generate()?;
    let simulated = start.elapsed();
    let files = write_case(&data, case)?;
    println!(
        "case: {} — {} SNPs × {} samples simulated in {:.1} s, written in {:.1} s ({:.0} MiB plain, {:.0} MiB bgzipped)",
        case.display(),
        panel.loci,
        data.samples.individuals.len(),
        simulated.as_secs_f64(),
        (start.elapsed() - simulated).as_secs_f64(),
        mebibytes(fs::metadata(&files.vcf)?.len()),
        mebibytes(fs::metadata(&files.vcf_bgzipped)?.len()),
    );
    Ok(())
}

fn mebibytes(bytes: u64) -> f64 {
    bytes as f64 / (1024.0 * 1024.0)
}

/// What one child process cost.
struct Measured {
    wall: Duration,
    peak_kib: i64,
    user: Duration,
    system: Duration,
}

impl Measured {
    fn print(&self, what: &str) {
        println!(
            "{what}: {:.2} s wall, {:.2} s user + {:.2} s system CPU, peak memory {:.0} MiB",
            self.wall.as_secs_f64(),
            self.user.as_secs_f64(),
            self.system.as_secs_f64(),
            self.peak_kib as f64 / 1024.0
        );
    }
}

/// Runs `program args` (its output shown), waits for it with `wait4` to get its own resource
/// use, and fails when it exits non-zero.
fn timed(program: &Path, args: &[&str]) -> Result<Measured, Box<dyn Error>> {
    let start = Instant::now();
    let mut command = Command::new(program);
    command.args(args);
    // SAFETY: the hook does nothing, so it is async-signal-safe. Its presence makes std
    // start the child with fork and exec rather than posix_spawn's vfork, whose child
    // shares this process's memory map until exec and so starts with this process's peak
    // resident size in `ru_maxrss`.
    unsafe { command.pre_exec(|| Ok(())) };
    let child = command.spawn()?;
    let pid = libc::pid_t::try_from(child.id())?;
    let mut status: libc::c_int = 0;
    // SAFETY: an all-zero `rusage` is a valid value of this plain C struct.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    // SAFETY: `pid` is our own child, not yet reaped (`child` is never waited on through std);
    // `status` and `usage` are valid, writable and live for the call.
    let reaped = unsafe { libc::wait4(pid, &mut status, 0, &mut usage) };
    let wall = start.elapsed();
    if reaped != pid {
        return Err(format!("waiting for {}: {}", program.display(), std::io::Error::last_os_error()).into());
    }
    if !libc::WIFEXITED(status) || libc::WEXITSTATUS(status) != 0 {
        return Err(format!("`{} {}` failed (wait status {status})", program.display(), args.join(" ")).into());
    }
    let seconds = |t: libc::timeval| Duration::from_secs(t.tv_sec as u64) + Duration::from_micros(t.tv_usec as u64);
    // ru_maxrss is in kibibytes on Linux.
    Ok(Measured { wall, peak_kib: usage.ru_maxrss, user: seconds(usage.ru_utime), system: seconds(usage.ru_stime) })
}

/// Prints each step's duration from the provenance record, and the time before the first step
/// and after the last.
fn print_step_times(provenance: &Path) -> Result<(), Box<dyn Error>> {
    let record: serde_json::Value = serde_json::from_slice(&fs::read(provenance)?)?;
    let instant = |value: &serde_json::Value| value.as_str().and_then(seconds_since_epoch);
    let run_started = instant(&record["run"]["started"]);
    let run_ended = instant(&record["run"]["ended"]);
    let steps = record["steps"].as_array().cloned().unwrap_or_default();
    let mut previous_end = run_started;
    for step in &steps {
        let (started, ended) = (instant(&step["started"]), instant(&step["ended"]));
        if let (Some(before), Some(started)) = (previous_end, started)
            && started - before >= 0.05
        {
            println!("  {:<28} {:>8.2} s", "(between steps)", started - before);
        }
        if let (Some(started), Some(ended)) = (started, ended) {
            let name = format!("{} ({})", step["id"].as_str().unwrap_or("?"), step["uses"].as_str().unwrap_or("?"));
            println!("  {name:<28} {:>8.2} s", ended - started);
        }
        previous_end = ended;
    }
    if let (Some(last), Some(ended)) = (previous_end, run_ended) {
        println!("  {:<28} {:>8.2} s", "(after the last step)", ended - last);
    }
    Ok(())
}

/// Seconds since 1970 of an RFC 3339 UTC time `YYYY-MM-DDTHH:MM:SS[.fff]Z`.
fn seconds_since_epoch(text: &str) -> Option<f64> {
    let text = text.strip_suffix('Z')?;
    let (date, time) = text.split_once('T')?;
    let mut date = date.splitn(3, '-').map(str::parse::<i64>);
    let (year, month, day) = (date.next()?.ok()?, date.next()?.ok()?, date.next()?.ok()?);
    let mut time = time.splitn(3, ':');
    let (hour, minute) = (time.next()?.parse::<f64>().ok()?, time.next()?.parse::<f64>().ok()?);
    let second = time.next()?.parse::<f64>().ok()?;
    Some(days_from_civil(year, month, day) as f64 * 86_400.0 + hour * 3600.0 + minute * 60.0 + second)
}

/// Days since 1970-01-01 of a proleptic Gregorian date (Hinnant's `days_from_civil`).
fn days_from_civil(year: i64, month: i64, day: i64) -> i64 {
    let year = if month <= 2 { year - 1 } else { year };
    let era = year.div_euclid(400);
    let year_of_era = year - era * 400;
    let day_of_year = (153 * (month + if month > 2 { -3 } else { 9 }) + 2) / 5 + day - 1;
    let day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
    era * 146_097 + day_of_era - 719_468
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rfc3339_times_convert_to_epoch_seconds() {
        // 2000-03-01 is day 11,017 after 1970-01-01 (hand-computed: 30 years of 365 days plus 7
        // leap days to 1999-12-31 is 10,957, then 31 + 29 days of 2000).
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 3, 1), 11_017);
        let start = seconds_since_epoch("2026-12-02T06:59:58.250Z").expect("parses");
        let end = seconds_since_epoch("2026-12-02T07:00:01Z").expect("parses");
        assert!((end - start - 2.75).abs() < 1e-6);
        assert_eq!(seconds_since_epoch("2026-12-02 07:00:01"), None);
    }

    #[test]
    fn arguments_need_an_output_folder() {
        let args = |list: &[&str]| list.iter().map(|s| s.to_string()).collect::<Vec<_>>().into_iter();
        assert!(parse(args(&["--verify"])).is_err());
        let options = parse(args(&["--out", "/tmp/x", "--threads", "2", "--verify"])).expect("valid");
        assert_eq!(
            (options.out, options.threads.as_deref(), options.verify),
            (PathBuf::from("/tmp/x"), Some("2"), true)
        );
        assert!(parse(args(&["--out", "/tmp/x", "--fast"])).is_err());
    }
}
