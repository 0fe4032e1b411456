//! From the raw recipe to a [`Recipe`]: defaults, dates, paths, steps and parameters.

use std::cell::OnceCell;
use std::path::{Component, Path, PathBuf};
use std::sync::Arc;

use popgauge_abi::{AssessmentInfo, Cohorts, SamplingInfo, did_you_mean};
use toml::Spanned;

use super::raw::{RawData, RawMap, RawRecipe, RawSampling};
use super::{
    DEFAULT_ACCEPT_FILTERS, DEFAULT_MAP_GRID_KM, DEFAULT_MISSING, DEFAULT_SEED, DEFAULT_THRESHOLDS, DataSpec,
    GenotypeFormat, InputFile, MapPositions, RECIPE_FILE, Recipe, RecipeError, ReportSpec, SiteFilters,
};
use crate::dates::{CivilDate, today};
use crate::host::{PluginScratch, PluginTrust};
use crate::source::Location;

mod steps;

/// Reads and resolves `CASE/case.toml`.
///
/// `allow_outside` lets data paths leave the case folder.
///
/// # Errors
/// A [`RecipeError`] naming the file, line and key, with a `help:` line.
pub fn load_recipe(case_dir: &Path, allow_outside: bool) -> Result<Recipe, RecipeError> {
    load_recipe_trusting(case_dir, allow_outside, &PluginTrust::default())
}

/// Reads and resolves `CASE/case.toml`, loading only the plugin libraries `trust` admits.
///
/// # Errors
/// As [`load_recipe`].
pub fn load_recipe_trusting(case_dir: &Path, allow_outside: bool, trust: &PluginTrust) -> Result<Recipe, RecipeError> {
    let recipe_path = case_dir.join(RECIPE_FILE);
    let bytes = std::fs::read(&recipe_path)
        .map_err(|source| RecipeError::Unreadable { path: recipe_path.display().to_string(), source })?;
    let text = decode_recipe(&bytes)?;
    let raw = parse(&text)?;
    Resolver { case_dir, text: &text, allow_outside, trust, scratch: OnceCell::new() }.resolve(raw, recipe_path)
}

/// Largest recipe accepted (1 MiB): a recipe is a page of settings; anything larger is not one.
pub const MAX_RECIPE_BYTES: usize = 1 << 20;

/// The recipe's bytes as text: UTF-8, at most [`MAX_RECIPE_BYTES`].
///
/// # Errors
/// [`RecipeError::Syntax`] naming the line of the first byte that is not UTF-8, or the size.
pub fn decode_recipe(bytes: &[u8]) -> Result<String, RecipeError> {
    if bytes.len() > MAX_RECIPE_BYTES {
        return Err(RecipeError::Syntax {
            at: Location::file(RECIPE_FILE),
            message: format!(
                "the recipe has {} bytes; popgauge reads recipes of at most {MAX_RECIPE_BYTES} bytes",
                bytes.len()
            ),
            help: "check that case.toml is the recipe; data belongs in the files it names".into(),
        });
    }
    match std::str::from_utf8(bytes) {
        Ok(text) => Ok(text.to_string()),
        Err(e) => {
            let line = bytes[..e.valid_up_to()].iter().filter(|&&b| b == b'\n').count() + 1;
            Err(RecipeError::Syntax {
                at: Location::line(RECIPE_FILE, line),
                message: "the recipe is not valid UTF-8 text".into(),
                help: "save case.toml as UTF-8 (most editors offer it under \"Save as… / Encoding\")".into(),
            })
        }
    }
}

/// Parses recipe text strictly.
///
/// # Errors
/// [`RecipeError::Syntax`] or [`RecipeError::UnknownKey`] with the line of the problem.
pub fn parse(text: &str) -> Result<RawRecipe, RecipeError> {
    toml::from_str::<RawRecipe>(text).map_err(|e| {
        let at = Location::at_offset(RECIPE_FILE, text, e.span().map_or(0, |s| s.start));
        let message = plain_type_names(e.message().trim());
        match unknown_field(&message) {
            Some((key, expected)) => {
                let suggestion = did_you_mean(&key, expected.iter().map(String::as_str)).map(str::to_string);
                RecipeError::UnknownKey { at, key, suggestion, expected }
            }
            None => RecipeError::Syntax { at, help: syntax_help(&message), message },
        }
    })
}

/// serde's Rust type names in a message, in the recipe writer's words.
fn plain_type_names(message: &str) -> String {
    [
        ("expected i64", "expected a whole number"),
        ("expected u64", "expected a whole number"),
        ("expected f64", "expected a number"),
        ("expected a boolean", "expected true or false"),
    ]
    .iter()
    .fold(message.to_string(), |text, (rust, plain)| text.replace(rust, plain))
}

fn syntax_help(message: &str) -> String {
    if message.starts_with("missing field") {
        "add the field; `popgauge new DIR` writes a commented recipe with every section".into()
    } else if message.contains("invalid type") {
        "check the value's type: text in quotes, numbers bare, lists in [ ]".into()
    } else {
        "fix the TOML at that position (https://toml.io describes the syntax)".into()
    }
}

/// Pulls the key and the allowed keys out of serde's "unknown field" message.
fn unknown_field(message: &str) -> Option<(String, Vec<String>)> {
    let rest = message.strip_prefix("unknown field `")?;
    let (key, rest) = rest.split_once('`')?;
    let expected = rest.split('`').skip(1).step_by(2).map(str::to_string).collect();
    Some((key.to_string(), expected))
}

struct Resolver<'a> {
    case_dir: &'a Path,
    text: &'a str,
    allow_outside: bool,
    trust: &'a PluginTrust,
    /// Private folder for plugin library copies, made when the first plugin step is planned.
    scratch: OnceCell<Arc<PluginScratch>>,
}

impl Resolver<'_> {
    fn at<T>(&self, spanned: &Spanned<T>) -> Location {
        Location::at_offset(RECIPE_FILE, self.text, spanned.span().start)
    }

    fn invalid<T>(&self, spanned: &Spanned<T>, message: String, help: &str) -> RecipeError {
        RecipeError::Invalid { at: self.at(spanned), message, help: help.into() }
    }

    fn resolve(&self, raw: RawRecipe, recipe_path: PathBuf) -> Result<Recipe, RecipeError> {
        let (assessment, date_defaulted) = self.assessment(&raw)?;
        let data = self.data(&raw.data)?;
        let steps = self.steps(&raw.steps)?;
        let report = self.report(&raw)?;
        let mut assessment = assessment;
        assessment.thresholds = report.thresholds.clone();
        Ok(Recipe {
            case_dir: self.case_dir.to_path_buf(),
            recipe_file: InputFile { role: "recipe".into(), relative: RECIPE_FILE.into(), path: recipe_path },
            assessment,
            date_defaulted,
            data,
            steps,
            report,
        })
    }

    fn assessment(&self, raw: &RawRecipe) -> Result<(AssessmentInfo, bool), RecipeError> {
        let a = raw.assessment.get_ref();
        let (date, defaulted) = match &a.date {
            Some(d) => {
                let parsed = CivilDate::parse(d.get_ref()).ok_or_else(|| {
                    self.invalid(
                        d,
                        format!("`date` is \"{}\", not a calendar date", d.get_ref()),
                        "write the date as YYYY-MM-DD, for example \"2026-11-30\"",
                    )
                })?;
                (parsed.to_string(), false)
            }
            None => (today().to_string(), true),
        };
        let generation_time_years = match &a.generation_time_years {
            Some(g) if !(g.get_ref().is_finite() && *g.get_ref() > 0.0) => {
                return Err(self.invalid(
                    g,
                    format!("`generation_time_years` is {}, but it must be a positive number of years", g.get_ref()),
                    "give the mean age of parents at birth in years, for example 4.0",
                ));
            }
            Some(g) => Some(*g.get_ref()),
            None => None,
        };
        let seed = match &a.seed {
            Some(s) if *s.get_ref() < 0 => {
                return Err(self.invalid(
                    s,
                    format!("`seed` is {}, but it must be a whole number ≥ 0", s.get_ref()),
                    "any whole number from 0 up will do; keep it to reproduce the run",
                ));
            }
            Some(s) => *s.get_ref() as u64,
            None => DEFAULT_SEED,
        };
        let info = AssessmentInfo {
            title: a.title.clone(),
            species: a.species.clone(),
            assessor: a.assessor.clone().unwrap_or_default(),
            organisation: a.organisation.clone().unwrap_or_default(),
            date,
            generation_time_years,
            generation_time_source: a.generation_time_source.clone().filter(|s| !s.trim().is_empty()),
            sampling: raw.sampling.as_ref().map(|s| self.sampling(s)).transpose()?,
            seed,
            thresholds: Vec::new(),
            populations: Vec::new(),
        };
        Ok((info, defaulted))
    }

    fn sampling(&self, raw: &RawSampling) -> Result<SamplingInfo, RecipeError> {
        let text = |t: &Option<String>| t.clone().filter(|s| !s.trim().is_empty());
        let cohorts = match &raw.cohorts {
            None => None,
            Some(c) => Some(match c.get_ref().as_str() {
                "single" => Cohorts::Single,
                "mixed" => Cohorts::Mixed,
                other => {
                    return Err(self.invalid(
                        c,
                        format!("`cohorts` is \"{other}\", not one popgauge knows"),
                        "write \"single\" when each sample holds animals of one cohort, \"mixed\" when it holds several ages",
                    ));
                }
            }),
        };
        Ok(SamplingInfo { life_stage: text(&raw.life_stage), tissue: text(&raw.tissue), lethal: raw.lethal, cohorts })
    }

    fn data(&self, raw: &Spanned<RawData>) -> Result<DataSpec, RecipeError> {
        let d = raw.get_ref();
        let (genotypes, format, samples) = self.genotype_source(raw)?;
        let populations = d.populations.as_ref().map(|p| self.input("populations", p)).transpose()?;
        let loci = d.loci.as_ref().map(|p| self.input("loci", p)).transpose()?;
        Ok(DataSpec {
            genotypes,
            format,
            samples,
            accept_filters: d
                .accept_filters
                .clone()
                .unwrap_or_else(|| DEFAULT_ACCEPT_FILTERS.iter().map(|s| s.to_string()).collect()),
            sites: self.site_filters(d)?,
            populations,
            loci,
            missing: d.missing.clone().unwrap_or_else(|| DEFAULT_MISSING.iter().map(|s| s.to_string()).collect()),
            ignore_columns: d.ignore_columns.clone().unwrap_or_default(),
            strict: d.strict.unwrap_or(false),
        })
    }

    /// The genotype file: a wide table (`genotypes`) or a VCF file with its sample sheet.
    fn genotype_source(
        &self,
        raw: &Spanned<RawData>,
    ) -> Result<(InputFile, GenotypeFormat, Option<InputFile>), RecipeError> {
        let d = raw.get_ref();
        match (&d.genotypes, &d.vcf, &d.samples) {
            (Some(_), Some(vcf), _) => Err(self.invalid(vcf, "[data] names both `genotypes` and `vcf`".into(), "keep one: `genotypes` for a wide table, or `vcf` with `samples` for a VCF file")),
            (Some(g), None, None) => Ok((self.input("genotypes", g)?, GenotypeFormat::Wide, None)),
            (Some(_), None, Some(samples)) => Err(self.invalid(samples, "`samples` goes with `vcf`; a wide table carries population and year per sample".into(), "remove `samples`, or name the VCF file with `vcf = \"…\"` instead of `genotypes`")),
            (None, Some(vcf), Some(samples)) => Ok((self.input("vcf", vcf)?, GenotypeFormat::Vcf, Some(self.input("samples", samples)?))),
            (None, Some(vcf), None) => Err(self.invalid(vcf, "`vcf` needs a sample sheet that gives each sample's population and year".into(), "add `samples = \"samples.csv\"` (columns sample, population, year)")),
            (None, None, _) => Err(self.invalid(raw, "[data] names no genotype file".into(), "add `genotypes = \"genotypes.csv\"` (a wide table: sample, population, year, then one column per locus), or `vcf = \"calls.vcf.gz\"` with `samples = \"samples.csv\"`")),
        }
    }

    fn site_filters(&self, d: &RawData) -> Result<SiteFilters, RecipeError> {
        let share = |value: &Option<Spanned<f64>>, name: &str, max: f64, example: &str| -> Result<f64, RecipeError> {
            match value {
                None => Ok(0.0),
                Some(v) if (0.0..=max).contains(v.get_ref()) => Ok(*v.get_ref()),
                Some(v) => Err(self.invalid(
                    v,
                    format!("`{name}` is {}, but it must lie between 0 and {max}", v.get_ref()),
                    example,
                )),
            }
        };
        let max_alleles = match &d.max_alleles {
            None => None,
            Some(m) if *m.get_ref() >= 1 => Some(*m.get_ref() as usize),
            Some(m) => {
                return Err(self.invalid(
                    m,
                    format!("`max_alleles` is {}, but it must be a whole number ≥ 1", m.get_ref()),
                    "for example 2 to read biallelic sites only",
                ));
            }
        };
        Ok(SiteFilters {
            min_call_rate: share(
                &d.min_call_rate,
                "min_call_rate",
                1.0,
                "for example 0.8 to read sites typed in at least 80% of samples",
            )?,
            min_maf: share(
                &d.min_maf,
                "min_maf",
                0.5,
                "for example 0.05 to drop sites whose minor allele is rarer than 5%",
            )?,
            max_alleles,
        })
    }

    fn input(&self, role: &str, path: &Spanned<String>) -> Result<InputFile, RecipeError> {
        let relative = path.get_ref();
        let written = Path::new(relative);
        let escapes = written.is_absolute() || written.components().any(|c| matches!(c, Component::ParentDir));
        if escapes && !self.allow_outside {
            return Err(self.invalid(
                path,
                format!("`{role}` path \"{relative}\" leaves the case folder"),
                "copy the file into the case folder, or run with --allow-outside if this is intended",
            ));
        }
        let full = self.case_dir.join(written);
        let canonical = full.canonicalize().map_err(|e| {
            self.invalid(
                path,
                format!("`{role}` file \"{relative}\" cannot be opened: {e}"),
                "check the file name; paths are relative to the case folder",
            )
        })?;
        if !canonical.is_file() {
            return Err(self.invalid(
                path,
                format!("`{role}` path \"{relative}\" is not a file"),
                "name a file, not a folder",
            ));
        }
        let case_canonical = self.case_dir.canonicalize().unwrap_or_else(|_| self.case_dir.to_path_buf());
        if !self.allow_outside && !canonical.starts_with(&case_canonical) {
            return Err(self.invalid(
                path,
                format!("`{role}` file \"{relative}\" is a link to a file outside the case folder"),
                "copy the file into the case folder, or run with --allow-outside if this is intended",
            ));
        }
        Ok(InputFile { role: role.into(), relative: relative.clone(), path: canonical })
    }

    fn report(&self, raw: &RawRecipe) -> Result<ReportSpec, RecipeError> {
        let report = raw.report.as_ref();
        let thresholds = match report.and_then(|r| r.thresholds.as_ref()) {
            Some(t) => {
                let values = t.get_ref().clone();
                let ascending = values.windows(2).all(|w| w[0] < w[1]);
                if values.is_empty() || !ascending || values.iter().any(|v| !(v.is_finite() && *v > 0.0)) {
                    return Err(self.invalid(
                        t,
                        format!("`thresholds` is {values:?}; it must list positive Ne values in ascending order"),
                        "for example [50, 500] or [100, 1000]",
                    ));
                }
                values
            }
            None => DEFAULT_THRESHOLDS.to_vec(),
        };
        let (template, template_dir) = match report.and_then(|r| r.template.as_ref()) {
            Some(t) if t.get_ref() != "standard" => (t.get_ref().clone(), Some(self.template_folder(t)?)),
            _ => ("standard".to_string(), None),
        };
        let map = report.and_then(|r| r.map.as_ref()).map(|m| self.map(m)).transpose()?.flatten();
        Ok(ReportSpec { template, template_dir, thresholds, map })
    }

    /// `[report.map]`: `None` unless `show = true`; the other keys are checked either way.
    fn map(&self, raw: &RawMap) -> Result<Option<MapPositions>, RecipeError> {
        let exact = match &raw.positions {
            None => false,
            Some(p) => match p.get_ref().as_str() {
                "grid" => false,
                "exact" => true,
                other => {
                    return Err(self.invalid(
                        p,
                        format!("`positions` is \"{other}\", not one popgauge knows"),
                        "write \"grid\" to show each population at the centre of its grid cell (see `grid_km`), or \"exact\" to show the positions as given",
                    ));
                }
            },
        };
        let cell_km = match &raw.grid_km {
            Some(g) if !(g.get_ref().is_finite() && *g.get_ref() > 0.0) => {
                return Err(self.invalid(
                    g,
                    format!("`grid_km` is {}, but it must be a positive number of kilometres", g.get_ref()),
                    "give the width of a grid cell, for example 10 for a 10 km grid; larger cells hide the sites better",
                ));
            }
            Some(g) if exact => {
                return Err(self.invalid(
                    g,
                    "`grid_km` is given, but `positions = \"exact\"` shows the positions without a grid".into(),
                    "remove `grid_km`, or write `positions = \"grid\"` to generalise the positions to that grid",
                ));
            }
            Some(g) => *g.get_ref(),
            None => DEFAULT_MAP_GRID_KM,
        };
        let positions = if exact { MapPositions::Exact } else { MapPositions::Grid { cell_km } };
        Ok(raw.show.unwrap_or(false).then_some(positions))
    }

    /// A custom template folder: inside the case (like data files), holding `assessment.typ`.
    fn template_folder(&self, path: &Spanned<String>) -> Result<PathBuf, RecipeError> {
        let relative = path.get_ref();
        let written = Path::new(relative);
        let escapes = written.is_absolute() || written.components().any(|c| matches!(c, Component::ParentDir));
        if escapes && !self.allow_outside {
            return Err(self.invalid(
                path,
                format!("template folder \"{relative}\" leaves the case folder"),
                "copy the template folder into the case folder, or run with --allow-outside if this is intended",
            ));
        }
        let canonical = self.case_dir.join(written).canonicalize().map_err(|e| {
            self.invalid(path, format!("template folder \"{relative}\" cannot be opened: {e}"), "give \"standard\" or a folder in the case that holds assessment.typ (copy templates/standard/ to start)")
        })?;
        if !canonical.is_dir() {
            return Err(self.invalid(
                path,
                format!("template \"{relative}\" is not a folder"),
                "give \"standard\" or a folder in the case that holds assessment.typ",
            ));
        }
        let case_canonical = self.case_dir.canonicalize().unwrap_or_else(|_| self.case_dir.to_path_buf());
        if !self.allow_outside && !canonical.starts_with(&case_canonical) {
            return Err(self.invalid(
                path,
                format!("template folder \"{relative}\" is a link to a folder outside the case folder"),
                "copy the template folder into the case folder, or run with --allow-outside if this is intended",
            ));
        }
        if !canonical.join("assessment.typ").is_file() {
            return Err(self.invalid(path, format!("template folder \"{relative}\" has no assessment.typ"), "a template folder holds the main file assessment.typ (copy templates/standard/assessment.typ to start)"));
        }
        Ok(canonical)
    }
}

fn is_valid_id(id: &str) -> bool {
    !id.is_empty() && id.len() <= 64 && id.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
}

#[cfg(test)]
mod tests;
