//! `popgauge portfolio OUT… --out DIR`: many case assessments in one indicator report.

use std::path::PathBuf;
use std::process::ExitCode;

use crate::dates::CivilDate;
use crate::portfolio::record::MapChoice;
use crate::portfolio::{CaseRef, DEFAULT_NE_NC_RATIO, PortfolioOptions, cases::read_manifest, run_portfolio};

/// Arguments of `popgauge portfolio`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Output folders of `popgauge run`, one per case.
    #[arg(value_name = "OUT")]
    pub outputs: Vec<PathBuf>,
    /// A CSV listing the output folders (column `output`, relative to the CSV) with optional
    /// `species_group` and `region` columns for the indicator tables.
    #[arg(long, value_name = "FILE")]
    pub manifest: Option<PathBuf>,
    /// The portfolio's output folder.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Replace an existing output folder.
    #[arg(long)]
    pub force: bool,
    /// Title of the portfolio document.
    #[arg(long, value_name = "TEXT")]
    pub title: Option<String>,
    /// Organisation named on the document [default: the one every case names, if they agree].
    #[arg(long, value_name = "TEXT")]
    pub organisation: Option<String>,
    /// Date of the portfolio, YYYY-MM-DD [default: today].
    #[arg(long, value_name = "DATE", value_parser = parse_date)]
    pub date: Option<CivilDate>,
    /// Ne/N ratio for populations with a census size but no genotypes (Ne = census × ratio).
    #[arg(long, value_name = "RATIO", default_value_t = DEFAULT_NE_NC_RATIO, value_parser = parse_ratio)]
    pub ne_nc_ratio: f64,
    /// Draw a map of the populations with coordinates (positions generalised to a grid unless
    /// --map-positions exact).
    #[arg(long)]
    pub map: bool,
    /// How the map shows positions: `grid` (generalised to cells of --map-grid-km) or `exact`.
    #[arg(long, value_name = "HOW", default_value = "grid", value_parser = ["grid", "exact"], requires = "map")]
    pub map_positions: String,
    /// Width of the map's grid cells in km.
    #[arg(long, value_name = "KM", default_value_t = 10.0, value_parser = parse_km, requires = "map")]
    pub map_grid_km: f64,
    /// Show nothing but errors.
    #[arg(long, short)]
    pub quiet: bool,
}

fn parse_date(text: &str) -> Result<CivilDate, String> {
    CivilDate::parse(text).ok_or_else(|| format!("\"{text}\" is not a date YYYY-MM-DD (for example 2026-12-03)"))
}

fn parse_km(text: &str) -> Result<f64, String> {
    match text.parse::<f64>() {
        Ok(km) if km.is_finite() && km > 0.0 => Ok(km),
        _ => Err(format!("\"{text}\" is not a cell width in km above 0 (for example 10)")),
    }
}

fn parse_ratio(text: &str) -> Result<f64, String> {
    match text.parse::<f64>() {
        Ok(r) if r > 0.0 && r <= 1.0 => Ok(r),
        _ => Err(format!(
            "\"{text}\" is not a ratio above 0 and at most 1 (the default, 0.1, is the indicator guidance's conservative value)"
        )),
    }
}

/// Makes the portfolio and prints where it went and its headline counts.
///
/// # Errors
/// A bad manifest or case output (named), an existing output folder without `--force`.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    let mut cases: Vec<CaseRef> = args.outputs.iter().map(|o| CaseRef::folder(o)).collect();
    if let Some(manifest) = &args.manifest {
        cases.extend(read_manifest(manifest)?);
    }
    let options = PortfolioOptions {
        cases,
        manifest: args.manifest.clone(),
        out: args.out.clone(),
        force: args.force,
        title: args.title.clone(),
        organisation: args.organisation.clone(),
        date: args.date,
        ne_nc_ratio: args.ne_nc_ratio,
        map: args.map.then(|| match args.map_positions.as_str() {
            "exact" => MapChoice::Exact,
            _ => MapChoice::Grid { grid_km: args.map_grid_km },
        }),
    };
    let summary = run_portfolio(&options)?;
    if !args.quiet {
        let source = &summary.source;
        if let Some(all) = source.indicators.iter().find(|i| i.scope == "all") {
            println!(
                "{} case(s), {} population(s), {} with an Ne ({} census-based).",
                source.cases.len(),
                all.populations,
                all.with_ne,
                all.census_based
            );
            for count in all.counts.iter().rev() {
                println!(
                    "  Ne > {}: {} by point estimate, {} by lower bound.",
                    count.threshold, count.above_point, count.above_lower
                );
            }
        }
        println!("Wrote {} (portfolio.pdf, tables/, provenance.json).", args.out.display());
    }
    Ok(ExitCode::SUCCESS)
}
