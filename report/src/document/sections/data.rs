//! Data and validation: samples per group, exclusions and the findings, grouped.

use super::*;

/// Data and validation.
#[derive(Debug, Clone, Serialize)]
pub struct DataSection {
    /// Genotype file.
    pub genotypes: String,
    /// Samples, loci and groups read.
    pub samples_read: usize,
    /// Loci read.
    pub loci_read: usize,
    /// Groups read.
    pub groups_read: usize,
    /// Id of the `validate` step, when in the recipe.
    pub validate_step: Option<String>,
    /// Samples and loci kept after all exclusions, display text.
    pub samples_kept: Option<String>,
    /// Loci kept.
    pub loci_kept: Option<String>,
    /// Samples per group: read and kept.
    pub groups: TableData,
    /// Every exclusion by any step (body part).
    pub exclusions: TableData,
    /// Appendix key of the rest of the exclusions.
    pub exclusions_more: Option<String>,
    /// Finding counts.
    pub errors: usize,
    /// Warnings.
    pub warnings: usize,
    /// Informational findings.
    pub infos: usize,
    /// Errors and warnings (body part).
    pub findings: TableData,
    /// Appendix key of all findings.
    pub findings_all: Option<String>,
}

pub(crate) fn data_section(ctx: &Context<'_>, extras: &mut Extras) -> DataSection {
    let doc = ctx.results.doc();
    let validate = ctx.results.step(uses::VALIDATE);
    let excluded_samples: BTreeSet<&str> =
        doc.steps.iter().flat_map(|s| s.exclusions.samples.iter().map(|e| e.name.as_str())).collect();
    let excluded_loci: BTreeSet<&str> =
        doc.steps.iter().flat_map(|s| s.exclusions.loci.iter().map(|e| e.name.as_str())).collect();
    let mut exclusions = exclusions_table(&doc.steps, validate);
    let exclusions_more = extras.overflow(&mut exclusions, "Exclusions (continued)".into(), RESULTS_FILE.into());
    // A reader's finding that a step repeats is counted and listed once, as on the command line.
    let findings: Vec<(String, &Finding)> = doc.distinct_findings();
    let count = |level| findings.iter().filter(|(_, f)| f.level == level).count();
    let serious: Vec<&(String, &Finding)> = findings.iter().filter(|(_, f)| f.level >= FindingLevel::Warning).collect();
    let mut body_findings = findings_table(serious.iter().copied());
    body_findings.rows.truncate(BODY_FINDINGS);
    body_findings.drop_empty_columns(&[]);
    let all_findings = findings_table(findings.iter());
    let findings_all = (all_findings.rows.len() > body_findings.rows.len())
        .then(|| extras.appendix("All findings".into(), all_findings, RESULTS_FILE.into()));
    DataSection {
        genotypes: doc.data.genotypes.clone(),
        samples_read: doc.data.samples,
        loci_read: doc.data.loci,
        groups_read: doc.data.groups.len(),
        validate_step: validate.map(|s| s.id.clone()),
        samples_kept: validate.map(|_| (doc.data.samples.saturating_sub(excluded_samples.len())).to_string()),
        loci_kept: validate.map(|_| (doc.data.loci.saturating_sub(excluded_loci.len())).to_string()),
        groups: groups_table(ctx),
        exclusions,
        exclusions_more,
        errors: count(FindingLevel::Error),
        warnings: count(FindingLevel::Warning),
        infos: count(FindingLevel::Info),
        findings: body_findings,
        findings_all,
    }
}

fn groups_table(ctx: &Context<'_>) -> TableData {
    if let Some(groups) = ctx.results.table(uses::VALIDATE, table::GROUPS) {
        let mut t = TableData::new(&[
            ("Population", false),
            ("Year", true),
            ("Samples read", true),
            ("Kept", true),
            ("Group", false),
        ]);
        for row in groups.iter() {
            t.push(vec![
                text(&row, col::POPULATION),
                whole(&row, col::YEAR),
                whole(&row, col::N_TOTAL),
                whole(&row, col::N_KEPT),
                text(&row, col::STATUS),
            ]);
        }
        return t;
    }
    let mut t = TableData::new(&[("Population", false), ("Year", true), ("Samples read", true)]);
    for group in &ctx.results.doc().data.groups {
        t.push(vec![group.population.clone(), group.year.to_string(), group.n.to_string()]);
    }
    t
}

fn exclusions_table(steps: &[StepResult], validate: Option<&StepResult>) -> TableData {
    let samples = validate.and_then(|v| table_of(v, table::SAMPLES));
    let group_of = |name: &str| -> String {
        samples
            .and_then(|t| t.iter().find(|r| r.text(col::SAMPLE) == Some(name)))
            .map(|r| {
                format!("{} {}", r.text(col::POPULATION).unwrap_or(""), r.label(col::YEAR).unwrap_or_default())
                    .trim()
                    .to_string()
            })
            .unwrap_or_default()
    };
    let mut t =
        TableData::new(&[("What", false), ("Name", false), ("Group", false), ("Step", false), ("Reason", false)]);
    for step in steps {
        for e in &step.exclusions.loci {
            t.push(vec!["locus".into(), e.name.clone(), format::UNDEFINED.into(), step.id.clone(), e.reason.clone()]);
        }
        for e in &step.exclusions.samples {
            let group = group_of(&e.name);
            t.push(vec![
                "sample".into(),
                e.name.clone(),
                if group.is_empty() { format::UNDEFINED.into() } else { group },
                step.id.clone(),
                e.reason.clone(),
            ]);
        }
    }
    t
}

fn findings_table<'f>(findings: impl Iterator<Item = &'f (String, &'f Finding)>) -> TableData {
    let mut t = TableData::new(&[("Level", false), ("Source", false), ("Where", false), ("Finding", false)]);
    for entry in grouped_findings(findings) {
        t.push(vec![entry.level.to_string(), entry.source.clone(), entry.places.join("; "), entry.message()]);
    }
    t
}

/// How many entries (errors and warnings) the findings table in the body shows.
const BODY_FINDINGS: usize = 15;

/// How many subjects or places one grouped finding names before "and N more".
const GROUP_LISTED: usize = 20;

/// One entry of the document's findings: a finding, or several of one source, level and code
/// that give the same reason for different rows.
#[derive(Debug)]
struct FindingEntry {
    level: FindingLevel,
    source: String,
    /// What the finding is about (`Brennmoor 2018–2024`), one per finding merged; empty when
    /// the message has no subject.
    subjects: Vec<String>,
    reason: String,
    /// The distinct places (`Where`) of the merged findings.
    places: Vec<String>,
}

impl FindingEntry {
    fn message(&self) -> String {
        if self.subjects.is_empty() {
            return self.reason.clone();
        }
        let shown = self.subjects.iter().take(GROUP_LISTED).cloned().collect::<Vec<_>>().join("; ");
        let more = self.subjects.len().saturating_sub(GROUP_LISTED);
        let subjects = if more > 0 { format!("{shown} and {more} more") } else { shown };
        format!("{subjects}: {}", self.reason)
    }
}

/// A message of the form "<subject>: <reason>", split there; a message without such a prefix
/// is all reason.
pub(super) fn subject_and_reason(message: &str) -> (Option<&str>, &str) {
    /// A subject names rows or cells; anything longer is a sentence of its own.
    const LONGEST_SUBJECT: usize = 120;
    // The first ": " outside parentheses: a subject may carry details ("group A 2018 (Pcrit
    // 0.05: Ne = inf; …)").
    let mut depth = 0_i32;
    let mut split = None;
    for (i, c) in message.char_indices() {
        match c {
            '(' => depth += 1,
            ')' => depth -= 1,
            ':' if depth == 0 && message[i + 1..].starts_with(' ') => {
                split = Some(i);
                break;
            }
            _ => {}
        }
    }
    let Some(i) = split else { return (None, message) };
    let (subject, reason) = (&message[..i], &message[i + 2..]);
    let plain_subject = subject.split(" (").next().unwrap_or(subject);
    if plain_subject.chars().count() <= LONGEST_SUBJECT && !reason.trim().is_empty() {
        (Some(subject), reason)
    } else {
        (None, message)
    }
}

/// The findings as the document lists them: findings of one source, level and code whose
/// messages differ only in their subject ("Brennmoor: ne_fs is \"inf\" because …", one per
/// population) become one entry naming every subject, in the order of the first. The results
/// file keeps one finding per row.
fn grouped_findings<'f>(findings: impl Iterator<Item = &'f (String, &'f Finding)>) -> Vec<FindingEntry> {
    let mut entries: Vec<FindingEntry> = Vec::new();
    // (source, level, code, reason) of each entry that has a subject → its index: one lookup
    // per finding, so a SNP panel's thousands of findings stay linear.
    let mut index: BTreeMap<(String, FindingLevel, String, String), usize> = BTreeMap::new();
    for (source, finding) in findings {
        let (subject, reason) = subject_and_reason(&finding.message);
        let place = where_text(&finding.location);
        let key = subject.map(|_| (source.clone(), finding.level, finding.code.clone(), reason.to_string()));
        match key.as_ref().and_then(|k| index.get(k)) {
            Some(&at) => {
                let entry = &mut entries[at];
                entry.subjects.extend(subject.map(str::to_string));
                if !entry.places.contains(&place) && place != format::UNDEFINED {
                    entry.places.retain(|p| p != format::UNDEFINED);
                    if entry.places.len() < GROUP_LISTED {
                        entry.places.push(place);
                    }
                }
            }
            None => {
                if let Some(key) = key {
                    index.insert(key, entries.len());
                }
                entries.push(FindingEntry {
                    level: finding.level,
                    source: source.clone(),
                    subjects: subject.map(str::to_string).into_iter().collect(),
                    reason: reason.to_string(),
                    places: vec![place],
                });
            }
        }
    }
    entries
}

fn where_text(w: &popgauge_abi::Where) -> String {
    let mut parts = Vec::new();
    if let Some(file) = &w.file {
        parts.push(match w.line {
            Some(line) => format!("{file}:{line}"),
            None => file.clone(),
        });
    }
    if let Some(c) = &w.column {
        parts.push(format!("column {c}"));
    }
    match (&w.population, w.year) {
        (Some(p), Some(y)) => parts.push(format!("{p} {y}")),
        (Some(p), None) => parts.push(p.clone()),
        (None, Some(y)) => parts.push(y.to_string()),
        (None, None) => {}
    }
    if let Some(l) = &w.locus {
        parts.push(format!("locus {l}"));
    }
    if let Some(s) = &w.sample {
        parts.push(format!("sample {s}"));
    }
    if parts.is_empty() { format::UNDEFINED.into() } else { parts.join(", ") }
}

#[cfg(test)]
mod tests {
    use popgauge_abi::{Finding, Where};

    use super::{findings_table, grouped_findings};

    fn temporal_inf(population: &str) -> (String, Finding) {
        (
            "ne-temporal".to_string(),
            Finding::warning(
                "infinite-estimate",
                format!("{population}: ne_fs is \"inf\" because the change does not exceed sampling noise"),
                Where { population: Some(population.into()), ..Where::default() },
            ),
        )
    }

    #[test]
    fn findings_with_one_reason_become_one_entry_naming_every_row() {
        let findings: Vec<(String, Finding)> =
            ["Brennmoor 2018–2021", "Lake Oster 2018–2024", "Tarrow Glen 2021–2024"].map(temporal_inf).into();
        let refs: Vec<(String, &Finding)> = findings.iter().map(|(s, f)| (s.clone(), f)).collect();
        let table = findings_table(refs.iter());
        assert_eq!(table.rows.len(), 1, "{:?}", table.rows);
        assert_eq!(
            table.rows[0][3],
            "Brennmoor 2018–2021; Lake Oster 2018–2024; Tarrow Glen 2021–2024: ne_fs is \"inf\" because the change \
             does not exceed sampling noise"
        );
        assert_eq!(table.rows[0][2], "Brennmoor 2018–2021; Lake Oster 2018–2024; Tarrow Glen 2021–2024");
    }

    #[test]
    fn findings_with_other_reasons_codes_or_sources_stay_apart() {
        let mut findings: Vec<(String, Finding)> = vec![temporal_inf("A"), temporal_inf("B")];
        findings.push(("ne-ld".into(), findings[0].1.clone()));
        findings
            .push(("ne-temporal".into(), Finding::warning("infinite-estimate", "C: another reason", Where::default())));
        findings
            .push(("ne-temporal".into(), Finding::info("infinite-estimate", "D: another reason", Where::default())));
        findings.push(("ne-temporal".into(), Finding::warning("no-estimate", "E: another reason", Where::default())));
        let refs: Vec<(String, &Finding)> = findings.iter().map(|(s, f)| (s.clone(), f)).collect();
        let entries = grouped_findings(refs.iter());
        let subjects: Vec<Vec<String>> = entries.iter().map(|e| e.subjects.clone()).collect();
        assert_eq!(subjects, [vec!["A", "B"], vec!["A"], vec!["C"], vec!["D"], vec!["E"]]);
    }

    #[test]
    fn a_subject_with_details_in_parentheses_is_split_after_them() {
        let flagged = |group: &str| {
            Finding::warning(
                "ld-precision-low",
                format!("group {group} (Pcrit 0.05: Ne = inf; Pcrit 0.02: Ne = 456): the method loses precision"),
                Where::default(),
            )
        };
        let findings = [("ld".to_string(), flagged("A 2018")), ("ld".to_string(), flagged("B 2024"))];
        let refs: Vec<(String, &Finding)> = findings.iter().map(|(s, f)| (s.clone(), f)).collect();
        let entries = grouped_findings(refs.iter());
        assert_eq!(entries.len(), 1);
        assert_eq!(entries[0].reason, "the method loses precision");
        assert_eq!(entries[0].subjects.len(), 2);
    }

    #[test]
    fn a_sentence_without_a_subject_is_never_merged() {
        let sentence =
            |code: &str| Finding::info(code, "Estimates carry uncertainty. Read the intervals.", Where::default());
        let findings = [
            ("status".to_string(), sentence("decision-caution")),
            ("status".to_string(), sentence("decision-caution")),
        ];
        let refs: Vec<(String, &Finding)> = findings.iter().map(|(s, f)| (s.clone(), f)).collect();
        assert_eq!(grouped_findings(refs.iter()).len(), 2);
    }
}
