//! `popgauge steps`: the built-in steps and their parameters.

use std::process::ExitCode;

use popgauge_abi::{Descriptor, ParamKind};
use popgauge_builtin::steps::BUILTIN;

/// Arguments of `popgauge steps`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Show only this step.
    pub uses: Option<String>,
    /// Print the descriptors as JSON.
    #[arg(long)]
    pub json: bool,
}

/// Prints the descriptors.
///
/// # Errors
/// An unknown step name.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    let descriptors: Vec<Descriptor> = BUILTIN
        .iter()
        .map(|s| s.descriptor())
        .filter(|d| args.uses.as_ref().is_none_or(|u| &d.uses == u))
        .collect();
    if descriptors.is_empty() {
        let names: Vec<String> = BUILTIN.iter().map(|s| s.descriptor().uses).collect();
        anyhow::bail!("no built-in step is called \"{}\"\n  help: built-in steps: {}", args.uses.unwrap_or_default(), names.join(", "));
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

/// The human-readable description of one step.
pub fn describe(d: &Descriptor) -> String {
    let mut text = format!("{} {}\n  {}\n", d.uses, d.version, d.summary);
    for p in &d.params {
        let default = if p.default.is_null() { "chosen from the data".to_string() } else { p.default.to_string() };
        text.push_str(&format!("  {:<22} {} (default {default})\n  {:<22} {}\n", p.name, kind(&p.kind), "", p.description));
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
