//! From the raw recipe to a [`Recipe`]: defaults, dates, paths, steps and parameters.

use std::collections::BTreeMap;
use std::path::{Component, Path, PathBuf};

use popgauge_abi::{AssessmentInfo, did_you_mean};
use popgauge_builtin::steps::{BUILTIN, find};
use toml::Spanned;

use super::raw::{RawData, RawRecipe, RawStep};
use super::{
    DEFAULT_MISSING, DEFAULT_SEED, DEFAULT_THRESHOLDS, DataSpec, InputFile, PlannedStep, RECIPE_FILE, Recipe,
    RecipeError, ReportSpec,
};
use crate::dates::{CivilDate, today};
use crate::source::Location;

/// Reads and resolves `CASE/case.toml`.
///
/// `allow_outside` lets data paths leave the case folder.
///
/// # Errors
/// A [`RecipeError`] naming the file, line and key, with a `help:` line.
pub fn load_recipe(case_dir: &Path, allow_outside: bool) -> Result<Recipe, RecipeError> {
    let recipe_path = case_dir.join(RECIPE_FILE);
    let text = std::fs::read_to_string(&recipe_path)
        .map_err(|source| RecipeError::Unreadable { path: recipe_path.display().to_string(), source })?;
    let raw = parse(&text)?;
    Resolver { case_dir, text: &text, allow_outside }.resolve(raw, recipe_path)
}

/// Parses recipe text strictly.
///
/// # Errors
/// [`RecipeError::Syntax`] or [`RecipeError::UnknownKey`] with the line of the problem.
pub fn parse(text: &str) -> Result<RawRecipe, RecipeError> {
    toml::from_str::<RawRecipe>(text).map_err(|e| {
        let at = Location::at_offset(RECIPE_FILE, text, e.span().map_or(0, |s| s.start));
        let message = e.message().trim().to_string();
        match unknown_field(&message) {
            Some((key, expected)) => {
                let suggestion = did_you_mean(&key, expected.iter().map(String::as_str)).map(str::to_string);
                RecipeError::UnknownKey { at, key, suggestion, expected }
            }
            None => RecipeError::Syntax {
                at,
                help: syntax_help(&message),
                message,
            },
        }
    })
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
                    self.invalid(d, format!("`date` is \"{}\", not a calendar date", d.get_ref()), "write the date as YYYY-MM-DD, for example \"2026-11-30\"")
                })?;
                (parsed.to_string(), false)
            }
            None => (today().to_string(), true),
        };
        let generation_time_years = match &a.generation_time_years {
            Some(g) if !(g.get_ref().is_finite() && *g.get_ref() > 0.0) => {
                return Err(self.invalid(g, format!("`generation_time_years` is {}, but it must be a positive number of years", g.get_ref()), "give the mean age of parents at birth in years, for example 4.0"));
            }
            Some(g) => Some(*g.get_ref()),
            None => None,
        };
        let seed = match &a.seed {
            Some(s) if *s.get_ref() < 0 => {
                return Err(self.invalid(s, format!("`seed` is {}, but it must be a whole number ≥ 0", s.get_ref()), "any whole number from 0 up will do; keep it to reproduce the run"));
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
            seed,
            thresholds: Vec::new(),
            populations: Vec::new(),
        };
        Ok((info, defaulted))
    }

    fn data(&self, raw: &Spanned<RawData>) -> Result<DataSpec, RecipeError> {
        let d = raw.get_ref();
        if let Some(vcf) = &d.vcf {
            return Err(self.invalid(vcf, "VCF input is not supported by this version of popgauge".into(), "convert the calls to a wide genotype table and name it with `genotypes = \"…\"`"));
        }
        if let Some(samples) = &d.samples {
            return Err(self.invalid(samples, "`samples` goes with `vcf`, which this version does not read".into(), "remove `samples`; the wide table carries population and year per sample"));
        }
        let genotypes = match &d.genotypes {
            Some(g) => self.input("genotypes", g)?,
            None => {
                return Err(self.invalid(raw, "[data] names no genotype file".into(), "add `genotypes = \"genotypes.csv\"` (a wide table: sample, population, year, then one column per locus)"));
            }
        };
        let populations = d.populations.as_ref().map(|p| self.input("populations", p)).transpose()?;
        Ok(DataSpec {
            genotypes,
            populations,
            missing: d.missing.clone().unwrap_or_else(|| DEFAULT_MISSING.iter().map(|s| s.to_string()).collect()),
            ignore_columns: d.ignore_columns.clone().unwrap_or_default(),
            strict: d.strict.unwrap_or(false),
        })
    }

    fn input(&self, role: &str, path: &Spanned<String>) -> Result<InputFile, RecipeError> {
        let relative = path.get_ref();
        let written = Path::new(relative);
        let escapes = written.is_absolute() || written.components().any(|c| matches!(c, Component::ParentDir));
        if escapes && !self.allow_outside {
            return Err(self.invalid(path, format!("`{role}` path \"{relative}\" leaves the case folder"), "copy the file into the case folder, or run with --allow-outside if this is intended"));
        }
        let full = self.case_dir.join(written);
        let canonical = full.canonicalize().map_err(|e| {
            self.invalid(path, format!("`{role}` file \"{relative}\" cannot be opened: {e}"), "check the file name; paths are relative to the case folder")
        })?;
        if !canonical.is_file() {
            return Err(self.invalid(path, format!("`{role}` path \"{relative}\" is not a file"), "name a file, not a folder"));
        }
        let case_canonical = self.case_dir.canonicalize().unwrap_or_else(|_| self.case_dir.to_path_buf());
        if !self.allow_outside && !canonical.starts_with(&case_canonical) {
            return Err(self.invalid(path, format!("`{role}` file \"{relative}\" is a link to a file outside the case folder"), "copy the file into the case folder, or run with --allow-outside if this is intended"));
        }
        Ok(InputFile { role: role.into(), relative: relative.clone(), path: canonical })
    }

    fn steps(&self, raw: &[Spanned<RawStep>]) -> Result<Vec<PlannedStep>, RecipeError> {
        let mut seen: BTreeMap<&str, usize> = BTreeMap::new();
        let mut planned = Vec::with_capacity(raw.len());
        for spanned in raw {
            let step = spanned.get_ref();
            let line = self.at(spanned).line.unwrap_or(1);
            let id = step.id.get_ref();
            if !is_valid_id(id) {
                return Err(self.invalid(&step.id, format!("step id \"{id}\" is not usable as a file name"), "use letters, digits, `-` and `_` only, for example \"qc\" or \"ne-ld\""));
            }
            if let Some(first) = seen.insert(id, line) {
                return Err(self.invalid(&step.id, format!("step id \"{id}\" is used twice (first at line {first})"), "give each step its own id; it names the step's results"));
            }
            planned.push(self.plan_step(step, line)?);
        }
        Ok(planned)
    }

    fn plan_step(&self, step: &RawStep, line: usize) -> Result<PlannedStep, RecipeError> {
        let uses = step.uses.get_ref();
        if uses.starts_with("plugin:") {
            return Err(self.invalid(&step.uses, format!("`uses = \"{uses}\"`: external plugins are not supported by this version"), "use a built-in step; `popgauge steps` lists them"));
        }
        let implementation = find(uses).ok_or_else(|| {
            let names: Vec<String> = BUILTIN.iter().map(|s| s.descriptor().uses).collect();
            let help = match did_you_mean(uses, names.iter().map(String::as_str)) {
                Some(s) => format!("did you mean \"{s}\"? `popgauge steps` lists the built-in steps"),
                None => format!("built-in steps: {}; `popgauge steps` describes them", names.join(", ")),
            };
            self.invalid(&step.uses, format!("unknown step `uses = \"{uses}\"`"), &help)
        })?;
        if let Some(sha) = &step.sha256 {
            return Err(self.invalid(sha, "`sha256` pins an external plugin library; built-in steps have none".into(), "remove the `sha256` line"));
        }
        let (given, lines) = self.given_params(step)?;
        let params = implementation.descriptor().resolve(&given).map_err(|error| RecipeError::Params {
            at: lines.get(error.name()).cloned().unwrap_or_else(|| Location::line(RECIPE_FILE, line)),
            step: step.id.get_ref().clone(),
            uses: uses.clone(),
            error,
        })?;
        Ok(PlannedStep { id: step.id.get_ref().clone(), uses: uses.clone(), step: implementation, params, line })
    }

    #[allow(clippy::type_complexity)]
    fn given_params(
        &self,
        step: &RawStep,
    ) -> Result<(BTreeMap<String, serde_json::Value>, BTreeMap<String, Location>), RecipeError> {
        let mut given = BTreeMap::new();
        let mut lines = BTreeMap::new();
        for (key, value) in step.params.iter().flatten() {
            let json = serde_json::to_value(value.get_ref()).map_err(|e| {
                self.invalid(value, format!("parameter `{}` cannot be read: {e}", key.get_ref()), "give a number, text, true/false or a list")
            })?;
            given.insert(key.get_ref().clone(), json);
            lines.insert(key.get_ref().clone(), self.at(key));
        }
        Ok((given, lines))
    }

    fn report(&self, raw: &RawRecipe) -> Result<ReportSpec, RecipeError> {
        let report = raw.report.as_ref();
        let thresholds = match report.and_then(|r| r.thresholds.as_ref()) {
            Some(t) => {
                let values = t.get_ref().clone();
                let ascending = values.windows(2).all(|w| w[0] < w[1]);
                if values.is_empty() || !ascending || values.iter().any(|v| !(v.is_finite() && *v > 0.0)) {
                    return Err(self.invalid(t, format!("`thresholds` is {values:?}; it must list positive Ne values in ascending order"), "for example [50, 500] or [100, 1000]"));
                }
                values
            }
            None => DEFAULT_THRESHOLDS.to_vec(),
        };
        let template = match report.and_then(|r| r.template.as_ref()) {
            Some(t) if t.get_ref() != "standard" => {
                return Err(self.invalid(t, format!("template \"{}\" cannot be used: this version typesets no document yet", t.get_ref()), "remove `template` or set it to \"standard\""));
            }
            _ => "standard".to_string(),
        };
        Ok(ReportSpec { template, thresholds })
    }
}

fn is_valid_id(id: &str) -> bool {
    !id.is_empty() && id.len() <= 64 && id.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
}

#[cfg(test)]
mod tests;
