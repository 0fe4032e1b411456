//! `popgauge verify` on a portfolio's record: every case record it names is read again and
//! checked (its files against its own record, its SHA-256 against the portfolio's), the
//! portfolio is made again from them with the recorded settings and every output compared;
//! with `deep`, each case is verified in turn by re-running it.

use std::path::Path;

use super::cases::{CaseRef, read_case};
use super::record::{self, PortfolioRecord};
use crate::audit::{Item, Verdict, VerifyError, VerifyOptions, VerifyReport, verify};
use crate::hash::sha256_hex;
use crate::progress::Progress;

/// Whether the bytes are a portfolio record (by their `schema`).
pub fn is_portfolio_record(bytes: &[u8]) -> bool {
    serde_json::from_slice::<serde_json::Value>(bytes)
        .is_ok_and(|v| v["schema"].as_str() == Some(record::PORTFOLIO_SCHEMA))
}

fn item(kind: &'static str, name: impl Into<String>, verdict: Verdict) -> Item {
    Item { kind, name: name.into(), verdict }
}

/// Verifies the portfolio record at `record_path`.
///
/// # Errors
/// [`VerifyError::Unreadable`] when the record cannot be read; everything else is reported as
/// an item.
pub fn verify_portfolio(
    record_path: &Path,
    deep: bool,
    options: &VerifyOptions,
    progress: &mut dyn Progress,
) -> Result<VerifyReport, VerifyError> {
    let unreadable = |message: String| VerifyError::Unreadable { path: record_path.display().to_string(), message };
    let bytes = std::fs::read(record_path).map_err(|e| unreadable(e.to_string()))?;
    let record: PortfolioRecord = record::parse(&bytes).map_err(unreadable)?;
    let out = record_path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let mut report = VerifyReport::default();
    report.notes.push(format!(
        "Portfolio record of {} case(s), made by popgauge {} (this is {}).",
        record.cases.len(),
        record.tool.version,
        env!("CARGO_PKG_VERSION")
    ));
    if let Some(manifest) = &record.manifest {
        let verdict = match std::fs::read(out.join(&manifest.path)) {
            Ok(content) if sha256_hex(&content) == manifest.sha256 => Verdict::Same,
            Ok(_) => Verdict::Differs("the manifest was changed after the portfolio was made".into()),
            Err(e) => Verdict::Differs(format!("cannot be read: {e}")),
        };
        report.items.push(item("input", &manifest.path, verdict));
    }
    let mut cases = Vec::new();
    for entry in &record.cases {
        let dir = out.join(&entry.output);
        let reference =
            CaseRef { dir: dir.clone(), species_group: entry.species_group.clone(), region: entry.region.clone() };
        match read_case(&reference) {
            Ok(case) if case.record_sha256 == entry.record_sha256 => {
                report.items.push(item("case", &entry.output, Verdict::Same));
                cases.push(case);
            }
            Ok(case) => report.items.push(item(
                "case",
                &entry.output,
                Verdict::Differs(format!(
                    "its provenance.json is not the one the portfolio read (SHA-256 {}…, recorded {}…)",
                    &case.record_sha256[..12],
                    entry.record_sha256.get(..12).unwrap_or(&entry.record_sha256)
                )),
            )),
            Err(e) => {
                let first = e.to_string().lines().next().unwrap_or_default().to_string();
                report.items.push(item("case", &entry.output, Verdict::Differs(first)));
            }
        }
        if deep {
            let verdict = match verify(&dir.join(super::cases::RECORD_FILE), options, progress) {
                Ok(case_report) if case_report.differences() > 0 => Verdict::Differs(format!(
                    "re-running the case: {} item(s) differ (popgauge verify {} lists them)",
                    case_report.differences(),
                    dir.display()
                )),
                Ok(case_report) if case_report.not_checked() > 0 => Verdict::NotChecked(format!(
                    "re-run except plugin steps whose code is not trusted ({} item(s) not checked)",
                    case_report.not_checked()
                )),
                Ok(_) => Verdict::Same,
                Err(e) => Verdict::Differs(e.to_string().lines().next().unwrap_or_default().to_string()),
            };
            report.items.push(item("re-run", &entry.output, verdict));
        }
    }
    let expected_prov = record::prov(&record.tool, &record.cases, record.manifest.as_ref(), &record.outputs);
    report.items.push(item(
        "record",
        "prov",
        if expected_prov == record.prov {
            Verdict::Same
        } else {
            Verdict::Differs("the PROV view does not follow from the record's cases and outputs".into())
        },
    ));
    let remade = (cases.len() == record.cases.len())
        .then(|| super::build(&cases, &record.settings, out))
        .map(|built| built.map(|(_, files)| record::outputs(&files)));
    for entry in &record.outputs {
        let on_disk = match std::fs::read(out.join(&entry.path)) {
            Ok(content) if sha256_hex(&content) == entry.sha256 => None,
            Ok(_) => Some("the file was changed after the portfolio was made".to_string()),
            Err(e) => Some(format!("cannot be read: {e}")),
        };
        let verdict = match (&remade, on_disk) {
            (_, Some(how)) => Verdict::Differs(how),
            (None, None) => Verdict::NotChecked("not made again: a case above differs".into()),
            (Some(Err(e)), None) => {
                Verdict::Differs(format!("cannot be made again: {}", e.to_string().lines().next().unwrap_or_default()))
            }
            (Some(Ok(made)), None) => match made.iter().find(|m| m.path == entry.path) {
                Some(m) if m.sha256 == entry.sha256 => Verdict::Same,
                Some(_) => Verdict::Differs("made again from the cases, it differs from the record".into()),
                None => Verdict::Differs("made again from the cases, this file is not written".into()),
            },
        };
        report.items.push(item("output", &entry.path, verdict));
    }
    Ok(report)
}
