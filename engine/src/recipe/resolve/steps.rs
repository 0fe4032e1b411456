//! Resolving the recipe's `[[step]]` tables: ids, `uses` (built in or `plugin:` with its
//! pinned hash, isolation and limits) and parameters checked against each step's descriptor.

use std::collections::BTreeMap;
use std::path::{Component, Path};
use std::sync::Arc;
use std::time::Duration;

use popgauge_abi::{Descriptor, Params, Step, did_you_mean};
use popgauge_builtin::steps::{BUILTIN, find};
use toml::Spanned;

use super::super::raw::RawStep;
use super::super::{BuiltinStep, PlannedStep, RECIPE_FILE, RecipeError};
use super::{Resolver, is_valid_id};
use crate::host::{
    DEFAULT_MEMORY_LIMIT_MIB, DEFAULT_TIMEOUT, Isolation, Limits, LoadError, PluginScratch, PluginSpec,
    load_plugin_trusting,
};
use crate::source::Location;

impl Resolver<'_> {
    pub(super) fn steps(&self, raw: &[Spanned<RawStep>]) -> Result<Vec<PlannedStep>, RecipeError> {
        let mut seen: BTreeMap<&str, usize> = BTreeMap::new();
        let mut planned = Vec::with_capacity(raw.len());
        for spanned in raw {
            let step = spanned.get_ref();
            let line = self.at(spanned).line.unwrap_or(1);
            let id = step.id.get_ref();
            if !is_valid_id(id) {
                return Err(self.invalid(
                    &step.id,
                    format!("step id \"{id}\" is not usable as a file name"),
                    "use letters, digits, `-` and `_` only, for example \"qc\" or \"ne-ld\"",
                ));
            }
            if let Some(first) = seen.insert(id, line) {
                return Err(self.invalid(
                    &step.id,
                    format!("step id \"{id}\" is used twice (first at line {first})"),
                    "give each step its own id; it names the step's results",
                ));
            }
            planned.push(self.plan_step(step, line)?);
        }
        Ok(planned)
    }

    pub(super) fn plan_step(&self, step: &RawStep, line: usize) -> Result<PlannedStep, RecipeError> {
        let uses = step.uses.get_ref();
        if let Some(path) = uses.strip_prefix("plugin:") {
            return self.plan_plugin_step(step, line, path);
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
            return Err(self.invalid(
                sha,
                "`sha256` pins an external plugin library; built-in steps have none".into(),
                "remove the `sha256` line",
            ));
        }
        if let Some(isolation) = &step.isolation {
            return Err(self.invalid(
                isolation,
                "`isolation` applies to external plugin steps; built-in steps run in popgauge".into(),
                "remove the `isolation` line",
            ));
        }
        if let Some(timeout) = &step.timeout_seconds {
            return Err(self.invalid(
                timeout,
                "`timeout_seconds` applies to external plugin steps only".into(),
                "remove the `timeout_seconds` line",
            ));
        }
        if let Some(memory) = &step.memory_limit_mib {
            return Err(self.invalid(
                memory,
                "`memory_limit_mib` applies to external plugin steps only".into(),
                "remove the `memory_limit_mib` line",
            ));
        }
        let params = self.resolve_params(step, line, &implementation.descriptor())?;
        Ok(PlannedStep {
            id: step.id.get_ref().clone(),
            uses: uses.clone(),
            step: Arc::new(BuiltinStep(implementation)),
            params,
            line,
            plugin: None,
        })
    }

    pub(super) fn resolve_params(
        &self,
        step: &RawStep,
        line: usize,
        descriptor: &Descriptor,
    ) -> Result<Params, RecipeError> {
        let (given, lines) = self.given_params(step)?;
        descriptor.resolve(&given).map_err(|error| RecipeError::Params {
            at: lines.get(error.name()).cloned().unwrap_or_else(|| Location::line(RECIPE_FILE, line)),
            step: step.id.get_ref().clone(),
            uses: step.uses.get_ref().clone(),
            error,
        })
    }

    /// A `uses = "plugin:PATH"` step: path, pin, isolation and time limit checked, the library
    /// loaded and refused at the first problem, then its parameters resolved.
    pub(super) fn plan_plugin_step(&self, step: &RawStep, line: usize, path: &str) -> Result<PlannedStep, RecipeError> {
        let id = step.id.get_ref();
        let spec = self.plugin_spec(step, path)?;
        let scratch = self.plugin_scratch(&step.uses)?;
        let external = load_plugin_trusting(&spec, &scratch, self.trust, id).map_err(|error| {
            let line_of = |s: &Spanned<String>| self.at(s).line.unwrap_or(line);
            let at_line = match (&error, &step.sha256) {
                (LoadError::Sha256 { .. }, Some(sha)) => line_of(sha),
                _ => line_of(&step.uses),
            };
            RecipeError::Plugin { at: Location::line(RECIPE_FILE, at_line), step: id.clone(), error }
        })?;
        let params = self.resolve_params(step, line, &external.descriptor())?;
        let record = external.record().clone();
        Ok(PlannedStep {
            id: id.clone(),
            uses: step.uses.get_ref().clone(),
            step: Arc::new(external),
            params,
            line,
            plugin: Some(record),
        })
    }

    pub(super) fn plugin_spec(&self, step: &RawStep, path: &str) -> Result<PluginSpec, RecipeError> {
        let id = step.id.get_ref();
        if path.is_empty() {
            return Err(self.invalid(
                &step.uses,
                "`uses = \"plugin:\"` names no library".into(),
                "write the library's path after `plugin:`, relative to the case folder",
            ));
        }
        let written = Path::new(path);
        let escapes = written.is_absolute() || written.components().any(|c| matches!(c, Component::ParentDir));
        if escapes && !self.allow_outside {
            return Err(self.invalid(
                &step.uses,
                format!("plugin path \"{path}\" leaves the case folder"),
                "copy the library into the case folder, or run with --allow-outside if this is intended",
            ));
        }
        let expected_sha256 = match &step.sha256 {
            None => {
                return Err(self.invalid(&step.uses, format!("step \"{id}\" uses a plugin library but pins no `sha256`"), &format!("review the library, then add `sha256 = \"…\"` with the hash that `popgauge steps --plugin {path}` prints")));
            }
            Some(sha) if !(sha.get_ref().len() == 64 && sha.get_ref().chars().all(|c| c.is_ascii_hexdigit())) => {
                return Err(self.invalid(
                    sha,
                    format!("`sha256` is \"{}\", not 64 hexadecimal digits", sha.get_ref()),
                    &format!("copy the hash that `popgauge steps --plugin {path}` prints"),
                ));
            }
            Some(sha) => Some(sha.get_ref().to_ascii_lowercase()),
        };
        let isolation = match &step.isolation {
            None => Isolation::Process,
            Some(text) => Isolation::parse(text.get_ref()).ok_or_else(|| {
                self.invalid(
                    text,
                    format!("`isolation` is \"{}\"", text.get_ref()),
                    "write \"process\" (default: crashes and hangs fail only this step) or \"in-process\" (faster)",
                )
            })?,
        };
        let timeout = match &step.timeout_seconds {
            None => DEFAULT_TIMEOUT,
            Some(t) if !(1..=86_400).contains(t.get_ref()) => {
                return Err(self.invalid(
                    t,
                    format!(
                        "`timeout_seconds` is {}, but it must be a whole number of seconds from 1 to 86400",
                        t.get_ref()
                    ),
                    "for example 600 (ten minutes, the default)",
                ));
            }
            Some(t) => Duration::from_secs(*t.get_ref() as u64),
        };
        let memory_mib = match &step.memory_limit_mib {
            None => DEFAULT_MEMORY_LIMIT_MIB,
            Some(m) if !(64..=1_048_576).contains(m.get_ref()) => {
                return Err(self.invalid(
                    m,
                    format!(
                        "`memory_limit_mib` is {}, but it must be a whole number of MiB from 64 to 1048576",
                        m.get_ref()
                    ),
                    &format!("for example {DEFAULT_MEMORY_LIMIT_MIB} (8 GiB, the default)"),
                ));
            }
            Some(m) => *m.get_ref() as u64,
        };
        let limits = Limits { timeout, memory_mib };
        Ok(PluginSpec { shown: path.into(), path: self.case_dir.join(written), expected_sha256, isolation, limits })
    }

    pub(super) fn plugin_scratch(&self, at: &Spanned<String>) -> Result<Arc<PluginScratch>, RecipeError> {
        if let Some(scratch) = self.scratch.get() {
            return Ok(Arc::clone(scratch));
        }
        let scratch = PluginScratch::new().map_err(|e| {
            self.invalid(
                at,
                format!("cannot create a private temporary folder for plugin libraries: {e}"),
                "check that the temporary folder (TMPDIR) is writable",
            )
        })?;
        Ok(Arc::clone(self.scratch.get_or_init(|| scratch)))
    }

    #[allow(clippy::type_complexity)]
    pub(super) fn given_params(
        &self,
        step: &RawStep,
    ) -> Result<(BTreeMap<String, serde_json::Value>, BTreeMap<String, Location>), RecipeError> {
        let mut given = BTreeMap::new();
        let mut lines = BTreeMap::new();
        for (key, value) in step.params.iter().flatten() {
            let json = serde_json::to_value(value.get_ref()).map_err(|e| {
                self.invalid(
                    value,
                    format!("parameter `{}` cannot be read: {e}", key.get_ref()),
                    "give a number, text, true/false or a list",
                )
            })?;
            given.insert(key.get_ref().clone(), json);
            lines.insert(key.get_ref().clone(), self.at(key));
        }
        Ok((given, lines))
    }
}
