//! `popgauge steps`: the built-in steps and their parameters, or a plugin library's descriptor
//! and SHA-256 (`--plugin PATH`), ready to paste into a recipe.

use std::path::PathBuf;
use std::process::ExitCode;

use popgauge_abi::{Descriptor, ParamKind};
use popgauge_builtin::steps::BUILTIN;

use crate::host::{
    DEFAULT_MEMORY_LIMIT_MIB, DEFAULT_TIMEOUT, Isolation, Limits, PluginScratch, PluginSpec, load_plugin,
};

/// Arguments of `popgauge steps`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Show only this step.
    pub uses: Option<String>,
    /// Print the descriptors as JSON.
    #[arg(long)]
    pub json: bool,
    /// Describe this plugin library instead: its descriptor and SHA-256 for the recipe.
    #[arg(long, value_name = "PATH")]
    pub plugin: Option<PathBuf>,
    /// Load the plugin in popgauge's own process rather than in a child process.
    #[arg(long, requires = "plugin")]
    pub in_process: bool,
    /// The case folder the printed recipe lines are for (default: the nearest folder above the
    /// library that holds a `case.toml`).
    #[arg(long, value_name = "DIR", requires = "plugin")]
    pub case: Option<PathBuf>,
}

/// Prints the descriptors.
///
/// # Errors
/// An unknown step name, or a plugin library that cannot be loaded.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    if let Some(path) = &args.plugin {
        return describe_plugin(path, &args);
    }
    let descriptors: Vec<Descriptor> =
        BUILTIN.iter().map(|s| s.descriptor()).filter(|d| args.uses.as_ref().is_none_or(|u| &d.uses == u)).collect();
    if descriptors.is_empty() {
        let names: Vec<String> = BUILTIN.iter().map(|s| s.descriptor().uses).collect();
        anyhow::bail!(
            "no built-in step is called \"{}\"\n  help: built-in steps: {}",
            args.uses.clone().unwrap_or_default(),
            names.join(", ")
        );
    }
    if args.json {
        println!("{}", serde_json::to_string_pretty(&descriptors)?);
    } else {
        for d in &descriptors {
            print!("{}", describe(d));
        }
    }
    Ok(ExitCode::SUCCESS)
}

fn describe_plugin(path: &std::path::Path, args: &Args) -> anyhow::Result<ExitCode> {
    let shown = path.display().to_string();
    let spec = PluginSpec {
        shown: shown.clone(),
        path: path.to_path_buf(),
        expected_sha256: None,
        isolation: if args.in_process { Isolation::InProcess } else { Isolation::Process },
        limits: Limits { timeout: DEFAULT_TIMEOUT, memory_mib: DEFAULT_MEMORY_LIMIT_MIB },
    };
    let scratch = PluginScratch::new()?;
    let step = load_plugin(&spec, &scratch).map_err(|e| anyhow::anyhow!("{e}\n  help: {}", e.help()))?;
    let record = step.record();
    if args.json {
        let value = serde_json::json!({ "path": shown, "sha256": record.sha256, "descriptor": record.descriptor });
        println!("{}", serde_json::to_string_pretty(&value)?);
        return Ok(ExitCode::SUCCESS);
    }
    print!("{}", describe(&record.descriptor));
    println!("library: {shown}");
    println!("sha256:  {}\n", record.sha256);
    match recipe_path(path, args.case.as_deref()) {
        Some((case, relative)) => {
            println!(
                "Recipe lines for the case in {} (the path is relative to that folder; review the library before pinning it):\n",
                case.display()
            );
            println!(
                "[[step]]\nid = \"{}\"\nuses = \"plugin:{relative}\"\nsha256 = \"{}\"",
                record.descriptor.uses, record.sha256
            );
        }
        None => {
            println!(
                "Recipe lines (no case folder holds the library: copy it into the case, for example into plugins/, and write its path relative to the case folder; review the library before pinning it):\n"
            );
            let name = path.file_name().map_or_else(|| shown.clone(), |n| n.to_string_lossy().into_owned());
            println!(
                "[[step]]\nid = \"{}\"\nuses = \"plugin:plugins/{name}\"\nsha256 = \"{}\"",
                record.descriptor.uses, record.sha256
            );
        }
    }
    Ok(ExitCode::SUCCESS)
}

/// The case folder a recipe naming `library` belongs to (`case`, or the nearest folder above
/// the library with a `case.toml`) and the library's path relative to it, with `/` between
/// parts as recipes write it. `None` when the library is not inside such a folder.
fn recipe_path(library: &std::path::Path, case: Option<&std::path::Path>) -> Option<(PathBuf, String)> {
    let library = std::fs::canonicalize(library).ok()?;
    let case_dir = match case {
        Some(dir) => std::fs::canonicalize(dir).ok()?,
        None => library.ancestors().skip(1).find(|dir| dir.join(crate::recipe::RECIPE_FILE).is_file())?.to_path_buf(),
    };
    let relative = library.strip_prefix(&case_dir).ok()?;
    let parts: Vec<String> = relative.components().map(|c| c.as_os_str().to_string_lossy().into_owned()).collect();
    // The case folder as the user would type it: relative to the current folder when inside it.
    let shown_case = match (case, std::env::current_dir().ok().and_then(|d| std::fs::canonicalize(d).ok())) {
        (Some(given), _) => given.to_path_buf(),
        (None, Some(here)) => {
            case_dir.strip_prefix(&here).map_or_else(|_| case_dir.clone(), std::path::Path::to_path_buf)
        }
        (None, None) => case_dir.clone(),
    };
    Some((shown_case, parts.join("/")))
}

/// The human-readable description of one step.
pub fn describe(d: &Descriptor) -> String {
    let mut text = format!("{} {}\n  {}\n", d.uses, d.version, d.summary);
    for p in &d.params {
        let default = match (p.required, p.default.is_null()) {
            (true, _) => "required, no default".to_string(),
            (false, true) => "default chosen from the data".to_string(),
            (false, false) => format!("default {}", p.default),
        };
        text.push_str(&format!("  {:<22} {} ({default})\n  {:<22} {}\n", p.name, kind(&p.kind), "", p.description));
    }
    text.push('\n');
    text
}

fn kind(kind: &ParamKind) -> String {
    match kind {
        ParamKind::Integer { min, max } => format!("whole number {min}–{max}"),
        ParamKind::Number { min, max } => format!("number {min}–{max}"),
        ParamKind::Boolean => "true/false".into(),
        ParamKind::Choice { choices } => format!("one of {}", choices.join(" | ")),
        ParamKind::NumberList { min, max } => format!("list of numbers {min}–{max}"),
        ParamKind::TextList { choices } if choices.is_empty() => "list of text".into(),
        ParamKind::TextList { choices } => format!("list of {}", choices.join(" | ")),
    }
}
