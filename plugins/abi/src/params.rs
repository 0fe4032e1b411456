//! Step descriptors and parameter resolution.
//!
//! A step declares each parameter it accepts with a type, a range, a default and a one-line
//! description. The engine resolves a recipe's `[step.params]` against that declaration:
//! unknown names, wrong types and out-of-range values are refused, defaults are filled in, and
//! the resolved map is what the step receives and what the provenance record stores.
//!
//! A parameter may instead be *required* ([`Descriptor::required_param`]): it has no default,
//! and a recipe that leaves it out is refused with [`ParamError::Missing`]. This is for choices
//! the data cannot make and a silent default would hide, such as how the samples were taken.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};
use serde_json::Value;

use crate::suggest::did_you_mean;

/// Resolved parameters: every declared parameter, by name, with defaults filled in.
pub type Params = BTreeMap<String, Value>;

/// The type and admissible range of a parameter.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(tag = "type", rename_all = "snake_case", deny_unknown_fields)]
pub enum ParamKind {
    /// A whole number in `min..=max`.
    Integer {
        /// Smallest admissible value.
        min: i64,
        /// Largest admissible value.
        max: i64,
    },
    /// A real number in `min..=max`.
    Number {
        /// Smallest admissible value.
        min: f64,
        /// Largest admissible value.
        max: f64,
    },
    /// `true` or `false`.
    Boolean,
    /// One of a closed set of words.
    Choice {
        /// The admissible words.
        choices: Vec<String>,
    },
    /// A list of real numbers, each in `min..=max`.
    NumberList {
        /// Smallest admissible element.
        min: f64,
        /// Largest admissible element.
        max: f64,
    },
    /// A list of words (free text, or one of `choices` when that is not empty).
    TextList {
        /// Admissible words; empty means any text.
        #[serde(default, skip_serializing_if = "Vec::is_empty")]
        choices: Vec<String>,
    },
}

impl ParamKind {
    fn describe(&self) -> String {
        match self {
            ParamKind::Integer { min, max } => format!("a whole number from {min} to {max}"),
            ParamKind::Number { min, max } => format!("a number from {min} to {max}"),
            ParamKind::Boolean => "true or false".into(),
            ParamKind::Choice { choices } => format!("one of {}", quoted_list(choices)),
            ParamKind::NumberList { min, max } => format!("a list of numbers from {min} to {max}"),
            ParamKind::TextList { choices } if choices.is_empty() => "a list of text values".into(),
            ParamKind::TextList { choices } => format!("a list of values from {}", quoted_list(choices)),
        }
    }
}

fn quoted_list(items: &[String]) -> String {
    items.iter().map(|c| format!("\"{c}\"")).collect::<Vec<_>>().join(", ")
}

/// One parameter a step accepts.
// No `deny_unknown_fields` here: serde cannot combine it with the flattened `kind`, and with it
// no descriptor would read back from JSON (as external plugins send them).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
pub struct ParamSpec {
    /// Parameter name as written in `[step.params]`.
    pub name: String,
    /// Type and range.
    #[serde(flatten)]
    pub kind: ParamKind,
    /// Default value; `null` means "chosen from the data" and must be explained in `description`.
    /// A required parameter has `null` here and no default.
    pub default: Value,
    /// One line saying what it does.
    pub description: String,
    /// Whether a recipe must give it (there is no default). Absent in JSON means `false`, so
    /// descriptors written before this field existed keep their meaning.
    #[serde(default, skip_serializing_if = "is_false")]
    pub required: bool,
}

/// For `skip_serializing_if`, which passes a reference.
fn is_false(value: &bool) -> bool {
    !*value
}

/// What a step is and which parameters it takes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct Descriptor {
    /// The name a recipe's `uses` gives (kebab-case).
    pub uses: String,
    /// The step's version (semver), recorded in results and provenance.
    pub version: String,
    /// One line saying what the step computes.
    pub summary: String,
    /// Parameters it accepts, in display order.
    #[serde(default)]
    pub params: Vec<ParamSpec>,
}

/// Why a recipe's parameters do not fit a step's descriptor.
#[derive(Debug, Clone, thiserror::Error, PartialEq)]
pub enum ParamError {
    /// A parameter the step does not declare.
    #[error("unknown parameter `{name}`")]
    Unknown {
        /// The name given.
        name: String,
        /// The closest declared name, when it looks like a typo.
        suggestion: Option<String>,
        /// All declared names.
        known: Vec<String>,
    },
    /// A value of the wrong type.
    #[error("parameter `{name}` must be {expected}, not {found}")]
    WrongType {
        /// Parameter name.
        name: String,
        /// What the descriptor wants.
        expected: String,
        /// What was given.
        found: String,
    },
    /// A value outside the admissible range or set.
    #[error("parameter `{name}` is {found} but must be {expected}")]
    OutOfRange {
        /// Parameter name.
        name: String,
        /// What the descriptor allows.
        expected: String,
        /// What was given.
        found: String,
    },
    /// A required parameter the recipe does not give.
    #[error("missing required parameter `{name}`")]
    Missing {
        /// Parameter name.
        name: String,
        /// What the descriptor allows.
        expected: String,
        /// The parameter's description, which says how to choose.
        description: String,
    },
}

impl ParamError {
    /// The parameter the error is about.
    pub fn name(&self) -> &str {
        match self {
            ParamError::Unknown { name, .. }
            | ParamError::WrongType { name, .. }
            | ParamError::OutOfRange { name, .. }
            | ParamError::Missing { name, .. } => name,
        }
    }

    /// A line saying how to fix it.
    pub fn help(&self) -> String {
        match self {
            ParamError::Unknown { suggestion: Some(s), .. } => {
                format!("did you mean `{s}`? `popgauge steps` lists each step's parameters")
            }
            ParamError::Unknown { known, .. } if known.is_empty() => "this step takes no parameters".into(),
            ParamError::Unknown { known, .. } => format!(
                "this step takes {}; `popgauge steps` describes them",
                known.iter().map(|k| format!("`{k}`")).collect::<Vec<_>>().join(", ")
            ),
            ParamError::WrongType { expected, .. } | ParamError::OutOfRange { expected, .. } => {
                format!("give {expected}")
            }
            ParamError::Missing { name, expected, description } => {
                format!("add `{name} = …` under [step.params] ({expected}; there is no default): {description}")
            }
        }
    }
}

impl Descriptor {
    /// A descriptor without parameters.
    pub fn new(uses: &str, version: &str, summary: &str) -> Descriptor {
        Descriptor { uses: uses.into(), version: version.into(), summary: summary.into(), params: Vec::new() }
    }

    /// Adds a parameter (builder style).
    pub fn param(mut self, name: &str, kind: ParamKind, default: Value, description: &str) -> Descriptor {
        self.params.push(ParamSpec {
            name: name.into(),
            kind,
            default,
            description: description.into(),
            required: false,
        });
        self
    }

    /// Adds a parameter without a default that every recipe must give (builder style). The
    /// description is shown in the refusal, so it should say how to choose the value.
    pub fn required_param(mut self, name: &str, kind: ParamKind, description: &str) -> Descriptor {
        self.params.push(ParamSpec {
            name: name.into(),
            kind,
            default: Value::Null,
            description: description.into(),
            required: true,
        });
        self
    }

    /// Checks the given parameters and fills in defaults.
    ///
    /// # Errors
    /// The first [`ParamError`]: an unknown name (in name order), then, in declaration order, a
    /// required parameter not given (or given as `null`), a wrong type or a value out of range.
    pub fn resolve(&self, given: &BTreeMap<String, Value>) -> Result<Params, ParamError> {
        for name in given.keys() {
            if !self.params.iter().any(|p| &p.name == name) {
                let known: Vec<String> = self.params.iter().map(|p| p.name.clone()).collect();
                let suggestion = did_you_mean(name, known.iter().map(String::as_str)).map(str::to_string);
                return Err(ParamError::Unknown { name: name.clone(), suggestion, known });
            }
        }
        let mut resolved = Params::new();
        for spec in &self.params {
            let value = match given.get(&spec.name) {
                Some(v) if spec.required && v.is_null() => return Err(missing(spec)),
                Some(v) => check_value(spec, v)?,
                None if spec.required => return Err(missing(spec)),
                None => spec.default.clone(),
            };
            resolved.insert(spec.name.clone(), value);
        }
        Ok(resolved)
    }

    /// Checks that every default is admissible (used by registry tests of every step).
    ///
    /// # Errors
    /// The first default that does not fit its own declaration.
    pub fn check_defaults(&self) -> Result<(), ParamError> {
        for spec in &self.params {
            if !spec.default.is_null() {
                check_value(spec, &spec.default)?;
            }
        }
        Ok(())
    }
}

fn missing(spec: &ParamSpec) -> ParamError {
    ParamError::Missing {
        name: spec.name.clone(),
        expected: spec.kind.describe(),
        description: spec.description.clone(),
    }
}

fn check_value(spec: &ParamSpec, value: &Value) -> Result<Value, ParamError> {
    // `null` means "chosen from the data" and is admissible exactly where it is the default
    // (a resolved record written by popgauge carries it explicitly).
    if value.is_null() && spec.default.is_null() {
        return Ok(Value::Null);
    }
    let wrong_type = || ParamError::WrongType {
        name: spec.name.clone(),
        expected: spec.kind.describe(),
        found: describe_value(value),
    };
    let out_of_range =
        || ParamError::OutOfRange { name: spec.name.clone(), expected: spec.kind.describe(), found: value.to_string() };
    match &spec.kind {
        ParamKind::Integer { min, max } => {
            let i = value.as_i64().filter(|_| !value.is_f64()).ok_or_else(wrong_type)?;
            if i < *min || i > *max {
                return Err(out_of_range());
            }
        }
        ParamKind::Number { min, max } => {
            let x = value.as_f64().ok_or_else(wrong_type)?;
            if !(x >= *min && x <= *max) {
                return Err(out_of_range());
            }
        }
        ParamKind::Boolean => {
            value.as_bool().ok_or_else(wrong_type)?;
        }
        ParamKind::Choice { choices } => {
            let s = value.as_str().ok_or_else(wrong_type)?;
            if !choices.iter().any(|c| c == s) {
                return Err(out_of_range());
            }
        }
        ParamKind::NumberList { min, max } => {
            let items = value.as_array().ok_or_else(wrong_type)?;
            for item in items {
                let x = item.as_f64().ok_or_else(wrong_type)?;
                if !(x >= *min && x <= *max) {
                    return Err(out_of_range());
                }
            }
        }
        ParamKind::TextList { choices } => {
            let items = value.as_array().ok_or_else(wrong_type)?;
            for item in items {
                let s = item.as_str().ok_or_else(wrong_type)?;
                if !choices.is_empty() && !choices.iter().any(|c| c == s) {
                    return Err(out_of_range());
                }
            }
        }
    }
    Ok(value.clone())
}

fn describe_value(value: &Value) -> String {
    match value {
        Value::Null => "nothing".into(),
        Value::Bool(b) => format!("the boolean {b}"),
        Value::Number(n) if n.is_f64() => format!("the number {n}"),
        Value::Number(n) => format!("the whole number {n}"),
        Value::String(s) => format!("the text \"{s}\""),
        Value::Array(_) => "a list".into(),
        Value::Object(_) => "a table".into(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn descriptor() -> Descriptor {
        Descriptor::new("validate", "0.1.0", "checks")
            .param("max_missing_locus", ParamKind::Number { min: 0.0, max: 1.0 }, json!(0.2), "max share missing")
            .param("min_group_size", ParamKind::Integer { min: 1, max: 100000 }, json!(5), "min group size")
            .param("plan", ParamKind::Choice { choices: vec!["I".into(), "II".into()] }, json!("II"), "plan")
    }

    fn given(pairs: &[(&str, Value)]) -> BTreeMap<String, Value> {
        pairs.iter().map(|(k, v)| (k.to_string(), v.clone())).collect()
    }

    #[test]
    fn fills_defaults_and_keeps_given_values() {
        let resolved = descriptor().resolve(&given(&[("min_group_size", json!(8))])).unwrap();
        assert_eq!(resolved["max_missing_locus"], json!(0.2));
        assert_eq!(resolved["min_group_size"], json!(8));
        assert_eq!(resolved["plan"], json!("II"));
        assert!(descriptor().check_defaults().is_ok());
    }

    /// Common practice: a descriptor survives JSON, as it must to cross the plugin ABI.
    #[test]
    fn descriptors_read_back_from_json() {
        let d = descriptor().param("list", ParamKind::TextList { choices: vec![] }, json!([]), "texts");
        let back: Descriptor = serde_json::from_str(&serde_json::to_string(&d).unwrap()).unwrap();
        assert_eq!(back, d);
    }

    #[test]
    fn refuses_unknown_names_with_a_suggestion() {
        let err = descriptor().resolve(&given(&[("max_mising_locus", json!(0.1))])).unwrap_err();
        assert_eq!(err.to_string(), "unknown parameter `max_mising_locus`");
        assert_eq!(err.help(), "did you mean `max_missing_locus`? `popgauge steps` lists each step's parameters");
    }

    #[test]
    fn refuses_wrong_types_and_ranges() {
        let d = descriptor();
        let err = d.resolve(&given(&[("min_group_size", json!(2.5))])).unwrap_err();
        assert_eq!(
            err.to_string(),
            "parameter `min_group_size` must be a whole number from 1 to 100000, not the number 2.5"
        );
        let err = d.resolve(&given(&[("max_missing_locus", json!(1.5))])).unwrap_err();
        assert_eq!(err.to_string(), "parameter `max_missing_locus` is 1.5 but must be a number from 0 to 1");
        let err = d.resolve(&given(&[("plan", json!("III"))])).unwrap_err();
        assert_eq!(err.to_string(), "parameter `plan` is \"III\" but must be one of \"I\", \"II\"");
        let err = d.resolve(&given(&[("max_missing_locus", json!("0.2"))])).unwrap_err();
        assert!(matches!(err, ParamError::WrongType { .. }));
        let err = d.resolve(&given(&[("min_group_size", Value::Null)])).unwrap_err();
        assert!(matches!(err, ParamError::WrongType { .. }), "null only where it is the default");
    }

    #[test]
    fn null_is_accepted_where_it_is_the_default() {
        let d = descriptor().param("size", ParamKind::Integer { min: 2, max: 10 }, Value::Null, "automatic when null");
        let resolved = d.resolve(&given(&[("size", Value::Null)])).unwrap();
        assert_eq!(resolved["size"], Value::Null);
    }

    fn with_required_plan() -> Descriptor {
        Descriptor::new("ne-temporal", "0.1.0", "temporal Ne")
            .param("level", ParamKind::Number { min: 0.5, max: 0.99 }, json!(0.95), "interval level")
            .required_param("plan", ParamKind::Choice { choices: vec!["I".into(), "II".into()] }, "how it was sampled")
    }

    /// Common practice (a choice the data cannot make has no silent default): a required
    /// parameter left out, or given as null, is refused with its name, its admissible values
    /// and its description on the help line.
    #[test]
    fn a_required_parameter_must_be_given() {
        let d = with_required_plan();
        assert!(d.check_defaults().is_ok());
        for given_params in [given(&[]), given(&[("level", json!(0.9))]), given(&[("plan", Value::Null)])] {
            let err = d.resolve(&given_params).unwrap_err();
            assert_eq!(
                err,
                ParamError::Missing {
                    name: "plan".into(),
                    expected: "one of \"I\", \"II\"".into(),
                    description: "how it was sampled".into()
                }
            );
            assert_eq!(err.name(), "plan");
            assert_eq!(err.to_string(), "missing required parameter `plan`");
            assert_eq!(
                err.help(),
                "add `plan = …` under [step.params] (one of \"I\", \"II\"; there is no default): how it was sampled"
            );
        }
        let resolved = d.resolve(&given(&[("plan", json!("I"))])).unwrap();
        assert_eq!((&resolved["plan"], &resolved["level"]), (&json!("I"), &json!(0.95)));
        let err = d.resolve(&given(&[("plan", json!("III"))])).unwrap_err();
        assert!(matches!(err, ParamError::OutOfRange { .. }), "a given value is still checked");
    }

    /// EVOLUTION.md (an optional JSON field keeps the ABI version): `required` is written only
    /// when true, and a descriptor without it (as older plugins send) reads as not required.
    #[test]
    fn required_is_an_optional_json_field() {
        let plain = serde_json::to_value(descriptor()).unwrap();
        assert!(plain["params"].as_array().unwrap().iter().all(|p| p.get("required").is_none()));
        let old_plugin = json!({
            "uses": "x", "version": "1.0.0", "summary": "s",
            "params": [{"name": "n", "type": "integer", "min": 1, "max": 9, "default": 3, "description": "d"}]
        });
        let read: Descriptor = serde_json::from_value(old_plugin).unwrap();
        assert!(!read.params[0].required);
        let d = with_required_plan();
        let json = serde_json::to_value(&d).unwrap();
        assert_eq!(json["params"][1]["required"], json!(true));
        assert_eq!(json["params"][1]["default"], Value::Null);
        let back: Descriptor = serde_json::from_value(json).unwrap();
        assert_eq!(back, d);
    }
}
