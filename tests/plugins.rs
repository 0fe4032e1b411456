//! External plugin libraries: loading refusals, failures contained at run time, provenance,
//! `popgauge steps --plugin`, and a built-in step exported through the SDK giving identical
//! results. The plugin crates are built by the test with the same cargo and profile.

use std::collections::HashMap;
use std::path::PathBuf;
use std::process::Command;
use std::sync::{Mutex, OnceLock};

use popgauge::hash::sha256_hex;

use crate::support::{Case, Output, repo_root};

/// Builds a plugin crate of the workspace once per test binary and returns its library path.
pub fn plugin_library(package: &str) -> PathBuf {
    static BUILT: OnceLock<Mutex<HashMap<String, PathBuf>>> = OnceLock::new();
    let mut built = BUILT.get_or_init(Default::default).lock().unwrap_or_else(|e| e.into_inner());
    if let Some(path) = built.get(package) {
        return path.clone();
    }
    let mut command = Command::new(env!("CARGO"));
    command.args(["build", "-p", package, "--message-format=json-render-diagnostics"]).current_dir(repo_root());
    if !cfg!(debug_assertions) {
        command.arg("--release");
    }
    let output = command.output().expect("run cargo");
    assert!(output.status.success(), "building {package} failed:\n{}", String::from_utf8_lossy(&output.stderr));
    let library = String::from_utf8_lossy(&output.stdout)
        .lines()
        .filter_map(|line| serde_json::from_str::<serde_json::Value>(line).ok())
        .filter(|m| {
            m["reason"] == "compiler-artifact"
                && m["target"]["kind"].as_array().is_some_and(|k| k.iter().any(|k| k == "cdylib"))
        })
        .flat_map(|m| m["filenames"].as_array().cloned().unwrap_or_default())
        .filter_map(|f| f.as_str().map(PathBuf::from))
        .find(|f| f.extension().is_some_and(|e| e == "so" || e == "dylib" || e == "dll"))
        .unwrap_or_else(|| panic!("cargo reported no library for {package}"));
    built.insert(package.into(), library.clone());
    library
}

const MISBEHAVE: &str = "popgauge-test-plugin-misbehave";

/// Copies a plugin library into `CASE/plugins/NAME` and returns its SHA-256.
pub fn install(case: &Case, package: &str, name: &str) -> String {
    let bytes = std::fs::read(plugin_library(package)).expect("read library");
    case.write(&format!("plugins/{name}"), &bytes);
    sha256_hex(&bytes)
}

/// The minimal fixture's recipe up to (and without) its steps, plus `steps`.
fn recipe_with(case: &Case, steps: &str) {
    let base = std::fs::read_to_string(repo_root().join("tests/fixtures/minimal/case.toml")).unwrap();
    let header = &base[..base.find("[[step]]").unwrap()];
    case.write("case.toml", format!("{header}{steps}"));
}

const QC_AND_DIVERSITY: &str = "[[step]]\nid = \"qc\"\nuses = \"validate\"\n[step.params]\nmin_group_size = 3\n\n[[step]]\nid = \"diversity\"\nuses = \"diversity\"\n";

fn plugin_step(id: &str, library: &str, sha: &str, extra: &str) -> String {
    format!("[[step]]\nid = \"{id}\"\nuses = \"plugin:plugins/{library}\"\nsha256 = \"{sha}\"\n{extra}\n")
}

fn run_with_env(case: &Case, args: &[&str], env: &[(&str, &str)]) -> Output {
    let cwd = case.root();
    let output = Command::new(env!("CARGO_BIN_EXE_popgauge"))
        .args(args)
        .envs(env.iter().copied())
        .current_dir(cwd)
        .output()
        .unwrap();
    let normalise = |bytes: &[u8]| String::from_utf8_lossy(bytes).replace(&cwd.display().to_string(), "<tmp>");
    Output {
        code: output.status.code().unwrap_or(-1),
        stdout: normalise(&output.stdout),
        stderr: normalise(&output.stderr),
    }
}

fn results(case: &Case) -> serde_json::Value {
    serde_json::from_str(&case.read("out/results.json")).expect("results.json parses")
}

fn step<'a>(doc: &'a serde_json::Value, id: &str) -> &'a serde_json::Value {
    doc["steps"].as_array().unwrap().iter().find(|s| s["id"] == id).unwrap_or_else(|| panic!("no step {id}"))
}

/// A refusal at load time: exit 2, the exact message, and no output folder (nothing ran).
fn assert_refused(case: &Case, expected_stderr: &str) {
    let run = case.run(&["run", "case"]);
    assert_eq!(run.stderr, expected_stderr);
    assert_eq!(run.code, 2);
    assert!(!case.path().join("out").exists(), "nothing is written after a refusal");
}

#[test]
fn refuses_a_missing_library() {
    let case = Case::fixture("minimal");
    recipe_with(&case, &format!("{QC_AND_DIVERSITY}\n{}", plugin_step("ext", "libnope.so", &"0".repeat(64), "")));
    assert_refused(
        &case,
        "error: case.toml:26: step \"ext\": plugins/libnope.so: the plugin library cannot be read (no such file)\n  help: build the plugin (its README says how) or fix the path; it is relative to the case folder\n",
    );
}

#[test]
fn refuses_a_wrong_hash() {
    let case = Case::fixture("minimal");
    let sha = install(&case, MISBEHAVE, "libmisbehave.so");
    let pinned = "3f07".repeat(16);
    recipe_with(&case, &plugin_step("ext", "libmisbehave.so", &pinned, ""));
    assert_refused(
        &case,
        &format!(
            "error: case.toml:17: step \"ext\": plugins/libmisbehave.so has SHA-256 {sha} but the recipe pins {pinned}\n  help: rebuild the library you reviewed, or update `sha256` after reviewing the change\n"
        ),
    );
}

#[test]
fn refuses_a_step_without_a_pin() {
    let case = Case::fixture("minimal");
    install(&case, MISBEHAVE, "libmisbehave.so");
    recipe_with(&case, "[[step]]\nid = \"ext\"\nuses = \"plugin:plugins/libmisbehave.so\"\n");
    assert_refused(
        &case,
        "error: case.toml:16:8: step \"ext\" uses a plugin library but pins no `sha256`\n  help: review the library, then add `sha256 = \"…\"` with the hash that `popgauge steps --plugin plugins/libmisbehave.so` prints\n",
    );
}

#[test]
fn refuses_a_library_without_the_entry_symbol() {
    let case = Case::fixture("minimal");
    let sha = install(&case, "popgauge-test-plugin-no-entry", "libnoentry.so");
    recipe_with(&case, &plugin_step("ext", "libnoentry.so", &sha, ""));
    assert_refused(
        &case,
        "error: case.toml:16: step \"ext\": plugins/libnoentry.so does not export the entry symbol `popgauge_plugin_entry`\n  help: a plugin exports `popgauge_plugin_entry` returning a complete table; in Rust call `popgauge_abi::export_step!` once (DEVELOPERS.md, \"Writing a plugin\")\n",
    );
}

#[test]
fn refuses_another_abi_version() {
    let case = Case::fixture("minimal");
    let sha = install(&case, "popgauge-test-plugin-wrong-abi", "libwrongabi.so");
    recipe_with(&case, &plugin_step("ext", "libwrongabi.so", &sha, ""));
    assert_refused(
        &case,
        "error: case.toml:16: step \"ext\": plugins/libwrongabi.so speaks plugin ABI version 99 but this popgauge speaks version 2\n  help: rebuild the plugin against a popgauge-abi of ABI version 2, or use a popgauge that speaks version 99\n",
    );
}

#[test]
fn refuses_a_file_that_is_not_a_library() {
    let case = Case::fixture("minimal");
    case.write("plugins/libtext.so", "not a library\n");
    let sha = sha256_hex(b"not a library\n");
    recipe_with(&case, &plugin_step("ext", "libtext.so", &sha, ""));
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.starts_with(
            "error: case.toml:16: step \"ext\": plugins/libtext.so cannot be loaded as a shared library: "
        ),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr.ends_with(
            "\n  help: name a shared library built for this machine (.so on Linux, .dylib on macOS, .dll on Windows)\n"
        ),
        "{}",
        run.stderr
    );
}

#[test]
fn refuses_a_descriptor_that_does_not_parse() {
    let case = Case::fixture("minimal");
    let sha = install(&case, MISBEHAVE, "libmisbehave.so");
    recipe_with(&case, &plugin_step("ext", "libmisbehave.so", &sha, ""));
    let run = run_with_env(&case, &["run", "case"], &[("POPGAUGE_TEST_BAD_DESCRIPTOR", "1")]);
    assert_eq!(
        run.stderr,
        "error: case.toml:16: step \"ext\": plugins/libmisbehave.so: the plugin's descriptor is not valid: key must be a string at line 1 column 23\n  help: this is a defect in the plugin; report it to its author\n"
    );
    assert_eq!(run.code, 2);
}

#[test]
fn refuses_parameters_the_descriptor_does_not_declare() {
    let case = Case::fixture("minimal");
    let sha = install(&case, MISBEHAVE, "libmisbehave.so");
    recipe_with(&case, &plugin_step("ext", "libmisbehave.so", &sha, "[step.params]\nmod = 1\nmode = \"explode\""));
    assert_refused(
        &case,
        "error: case.toml:19:1: unknown parameter `mod` for step \"ext\" (uses \"plugin:plugins/libmisbehave.so\")\n  help: did you mean `mode`? `popgauge steps` lists each step's parameters\n",
    );
    recipe_with(&case, &plugin_step("ext", "libmisbehave.so", &sha, "[step.params]\nmode = \"explode\""));
    assert_refused(
        &case,
        "error: case.toml:19:1: parameter `mode` is \"explode\" but must be one of \"ok\", \"error\", \"panic\", \"segfault\", \"abort\", \"hang\", \"invalid-json\", \"ragged\" for step \"ext\" (uses \"plugin:plugins/libmisbehave.so\")\n  help: give one of \"ok\", \"error\", \"panic\", \"segfault\", \"abort\", \"hang\", \"invalid-json\", \"ragged\"\n",
    );
}

/// Each way a plugin can fail while running is recorded against its step, with the reason, and
/// the run completes: the built-in steps before and after it have their results.
#[test]
fn failures_while_running_are_contained() {
    let case = Case::fixture("minimal");
    let sha = install(&case, MISBEHAVE, "libmisbehave.so");
    let failing = [
        ("error", "", "deliberate step error"),
        ("panic", "", "the plugin panicked at tests/plugins/misbehave/src/lib.rs:34:24: deliberate panic in run"),
        (
            "panic",
            "isolation = \"in-process\"",
            "the plugin panicked at tests/plugins/misbehave/src/lib.rs:34:24: deliberate panic in run",
        ),
        ("segfault", "", "the plugin crashed (signal 11, segmentation fault)"),
        ("abort", "", "the plugin crashed (signal 6, aborted)"),
        ("hang", "timeout_seconds = 1", "the plugin did not finish within 1 s and was stopped"),
        (
            "invalid-json",
            "",
            "the plugin returned a result that is not valid output JSON: expected ident at line 1 column 13",
        ),
        ("ragged", "", "table `counts`: row 1 has 1 cells but the table has 2 columns"),
    ];
    let mut steps = String::from("[[step]]\nid = \"qc\"\nuses = \"validate\"\n[step.params]\nmin_group_size = 3\n\n");
    for (i, (mode, extra, _)) in failing.iter().enumerate() {
        steps.push_str(&plugin_step(
            &format!("bad{i}"),
            "libmisbehave.so",
            &sha,
            &format!("{extra}\n[step.params]\nmode = \"{mode}\""),
        ));
    }
    steps.push_str(&plugin_step("good", "libmisbehave.so", &sha, ""));
    steps.push_str("[[step]]\nid = \"diversity\"\nuses = \"diversity\"\n");
    recipe_with(&case, &steps);
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let doc = results(&case);
    for (i, (mode, _, reason)) in failing.iter().enumerate() {
        let s = step(&doc, &format!("bad{i}"));
        assert_eq!((s["status"].as_str(), s["error"].as_str()), (Some("failed"), Some(*reason)), "mode {mode}");
        assert_eq!(s["tables"], serde_json::json!({}), "a failed step has no tables");
        assert!(run.stderr.contains(&format!("warning: step \"bad{i}\" failed: {reason}\n")), "{}", run.stderr);
    }
    assert_eq!(step(&doc, "good")["status"], "ok");
    assert_eq!(step(&doc, "good")["tables"]["counts"]["rows"], serde_json::json!([[8, 3]]));
    assert_eq!(step(&doc, "diversity")["status"], "ok");
    assert_eq!(step(&doc, "diversity")["tables"]["by_group"]["rows"].as_array().unwrap().len(), 2);
}

/// SIGTERM while a plugin hangs in its worker process kills the worker (it is not
/// left to its ten-minute time limit) and leaves no output and no temporary folder.
#[cfg(target_os = "linux")]
#[test]
fn an_interrupt_kills_the_plugin_worker() {
    let case = Case::fixture("minimal");
    let sha = install(&case, MISBEHAVE, "libmisbehave.so");
    recipe_with(&case, &plugin_step("stuck", "libmisbehave.so", &sha, "[step.params]\nmode = \"hang\""));
    let tmpdir = tempfile::tempdir().unwrap();
    let run = crate::support::spawn_run(&case, tmpdir.path());
    let worker = wait_for_worker(run.id());
    let (code, stderr) = crate::support::interrupt(run, libc::SIGTERM);
    assert_eq!(code, Some(130), "stderr: {stderr}");
    assert!(!alive(worker), "the worker process {worker} still runs after the run was interrupted");
    assert_eq!(crate::support::entries(case.root()), vec!["case"], "no output and no temporary folder");
    assert_eq!(crate::support::entries(tmpdir.path()), Vec::<String>::new(), "nothing left in TMPDIR");
}

/// The pid of `parent`'s `plugin-worker` child, once it runs (polled; a failure names the wait).
#[cfg(target_os = "linux")]
fn wait_for_worker(parent: u32) -> u32 {
    for _ in 0..600 {
        let children =
            std::fs::read_dir("/proc").unwrap().filter_map(|e| e.ok()?.file_name().to_str()?.parse::<u32>().ok());
        for pid in children {
            let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).unwrap_or_default();
            // Fields after the parenthesised command name: state, ppid, …
            let ppid = stat.rsplit_once(')').and_then(|(_, rest)| rest.split_whitespace().nth(1)?.parse::<u32>().ok());
            let cmdline = std::fs::read(format!("/proc/{pid}/cmdline")).unwrap_or_default();
            if ppid == Some(parent) && cmdline.split(|b| *b == 0).any(|arg| arg == b"plugin-worker") {
                return pid;
            }
        }
        std::thread::sleep(std::time::Duration::from_millis(100));
    }
    panic!("no plugin worker started within a minute");
}

/// Whether `pid` is still a live plugin worker (a zombie awaiting its reaper counts as ended,
/// and so does a new process that happens to reuse the number).
#[cfg(target_os = "linux")]
fn alive(pid: u32) -> bool {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).unwrap_or_default();
    let state = stat.rsplit_once(')').and_then(|(_, rest)| rest.split_whitespace().next());
    let cmdline = std::fs::read(format!("/proc/{pid}/cmdline")).unwrap_or_default();
    matches!(state, Some(s) if s != "Z" && s != "X") && cmdline.split(|b| *b == 0).any(|arg| arg == b"plugin-worker")
}

/// The demo of the example plugin as its README shows it: hash from `popgauge steps --plugin`,
/// recipe lines pasted, results and provenance carrying the library's hash and descriptor.
#[test]
fn example_plugin_runs_and_is_recorded_in_provenance() {
    let case = Case::fixture("minimal");
    let sha = install(&case, "popgauge-example-relatedness", "librelatedness.so");
    let described = case.run(&["steps", "--plugin", "case/plugins/librelatedness.so"]);
    assert_eq!(described.code, 0, "{}", described.stderr);
    // The recipe lines name the library relative to the case folder that holds it (found by
    // its case.toml), so they can be pasted into that recipe as printed.
    assert_eq!(
        described.stdout.replace(&sha, "<sha>"),
        "relatedness-qg 0.1.0\n  Mean pairwise relatedness per group (Queller & Goodnight 1989) with a bootstrap CI over loci\n  bootstrap              whole number 0–100000 (default 1000)\n                         bootstrap replicates over loci for the interval of r_mean (0 = none)\n  pairs_table            true/false (default true)\n                         also write the r of every pair (table `pairs`)\n\nlibrary: case/plugins/librelatedness.so\nsha256:  <sha>\n\nRecipe lines for the case in case (the path is relative to that folder; review the library before pinning it):\n\n[[step]]\nid = \"relatedness-qg\"\nuses = \"plugin:plugins/librelatedness.so\"\nsha256 = \"<sha>\"\n"
    );
    recipe_with(
        &case,
        &format!(
            "{QC_AND_DIVERSITY}\n{}",
            plugin_step("kin", "librelatedness.so", &sha, "[step.params]\nbootstrap = 200")
        ),
    );
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let doc = results(&case);
    let kin = step(&doc, "kin");
    assert_eq!((kin["status"].as_str(), kin["uses"].as_str()), (Some("ok"), Some("relatedness-qg")));
    assert_eq!(
        kin["tables"]["by_group"]["columns"],
        serde_json::json!(["population", "year", "n", "pairs", "loci", "r_mean", "r_low", "r_high"])
    );
    assert_eq!(kin["tables"]["by_group"]["rows"][0][3], 6, "North 2020: 4 samples, 6 pairs");
    assert!(case.path().join("out/tables/kin.by_group.csv").exists());
    let prov: serde_json::Value = serde_json::from_str(&case.read("out/provenance.json")).unwrap();
    let entry = prov["steps"].as_array().unwrap().iter().find(|s| s["id"] == "kin").unwrap();
    assert_eq!(entry["uses"], "plugin:plugins/librelatedness.so");
    assert_eq!(entry["plugin_sha256"], sha);
    assert_eq!(entry["plugin"]["sha256"], sha);
    assert_eq!(entry["plugin"]["isolation"], "process");
    assert_eq!(entry["plugin"]["descriptor"]["uses"], "relatedness-qg");
    assert_eq!(entry["params"], serde_json::json!({ "bootstrap": 200, "pairs_table": true }));
    let qc = prov["steps"].as_array().unwrap().iter().find(|s| s["id"] == "qc").unwrap();
    assert!(qc["plugin_sha256"].is_null() && qc.get("plugin").is_none(), "built-in steps have no plugin entry");
}

/// The built-in `diversity`, exported through the SDK as an external library, gives the same
/// bytes as the built-in in both isolation modes (common practice: an ABI must not change
/// results).
#[test]
fn a_builtin_exported_as_a_plugin_gives_identical_results() {
    let case = Case::fixture("minimal");
    let sha = install(&case, "popgauge-test-plugin-diversity-external", "libdiversity.so");
    recipe_with(
        &case,
        &format!(
            "{QC_AND_DIVERSITY}\n{}{}",
            plugin_step("div_process", "libdiversity.so", &sha, ""),
            plugin_step("div_inprocess", "libdiversity.so", &sha, "isolation = \"in-process\"")
        ),
    );
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let doc = results(&case);
    let builtin = step(&doc, "diversity");
    for id in ["div_process", "div_inprocess"] {
        let external = step(&doc, id);
        for key in ["uses", "version", "status", "tables", "findings", "citations"] {
            assert_eq!(external[key], builtin[key], "{id}: {key}");
        }
        for table in ["by_group", "by_locus"] {
            assert_eq!(
                case.read(&format!("out/tables/{id}.{table}.csv")),
                case.read(&format!("out/tables/diversity.{table}.csv"))
            );
        }
    }
}

#[test]
fn steps_plugin_refuses_with_the_same_messages() {
    let case = Case::fixture("minimal");
    install(&case, "popgauge-test-plugin-wrong-abi", "libwrongabi.so");
    let out = case.run(&["steps", "--plugin", "case/plugins/libwrongabi.so"]);
    assert_eq!(out.code, 2);
    assert_eq!(
        out.stderr,
        "error: case/plugins/libwrongabi.so speaks plugin ABI version 99 but this popgauge speaks version 2\n  help: rebuild the plugin against a popgauge-abi of ABI version 2, or use a popgauge that speaks version 99\n"
    );
}

/// A plugin written in C against `popgauge_plugin.h` alone, compiled with the system C
/// compiler: its typed-sample counts per locus equal the sum over groups of the built-in
/// `diversity` step's `n` (common practice: both count individuals typed at both alleles).
#[test]
fn a_c_plugin_built_from_the_header_runs() {
    let case = Case::fixture("minimal");
    let library = case.root().join("libcount.so");
    let compiled = Command::new("cc")
        .args(["-shared", "-fPIC", "-O2", "-std=c11", "-Wall", "-Wextra", "-Werror", "-I"])
        .arg(repo_root().join("plugins/abi"))
        .arg(repo_root().join("tests/plugins/c-count/count_typed.c"))
        .arg("-o")
        .arg(&library)
        .output()
        .expect("a C compiler (cc) is installed");
    assert!(compiled.status.success(), "{}", String::from_utf8_lossy(&compiled.stderr));
    let bytes = std::fs::read(&library).unwrap();
    case.write("plugins/libcount.so", &bytes);
    recipe_with(
        &case,
        &format!("{QC_AND_DIVERSITY}\n{}", plugin_step("count", "libcount.so", &sha256_hex(&bytes), "")),
    );
    let run = case.run(&["run", "case"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let doc = results(&case);
    let by_locus = &step(&doc, "diversity")["tables"]["by_locus"];
    let columns = by_locus["columns"].as_array().unwrap();
    let (locus, n) =
        (columns.iter().position(|c| c == "locus").unwrap(), columns.iter().position(|c| c == "n").unwrap());
    let mut expected: Vec<serde_json::Value> = Vec::new();
    for row in by_locus["rows"].as_array().unwrap() {
        match expected.iter_mut().find(|e| e[0] == row[locus]) {
            Some(e) => e[1] = (e[1].as_i64().unwrap() + row[n].as_i64().unwrap()).into(),
            None => expected.push(serde_json::json!([row[locus], row[n]])),
        }
    }
    let count = step(&doc, "count");
    assert_eq!(count["status"], "ok", "{count}");
    assert_eq!(count["tables"]["loci"]["rows"], serde_json::Value::Array(expected));
}
