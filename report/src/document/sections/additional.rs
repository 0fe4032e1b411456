//! Steps the document has no section for (plugins), shown as their tables.

use super::*;

/// A step the document has no section for.
#[derive(Debug, Clone, Serialize)]
pub struct AdditionalStep {
    /// Step id.
    pub id: String,
    /// `uses` name.
    pub uses: String,
    /// Version.
    pub version: String,
    /// Its tables (body part), by name.
    pub tables: Vec<NamedTable>,
    /// Its findings, as text.
    pub findings: Vec<String>,
    /// Why it failed, when it did (its tables are then empty).
    pub error: Option<String>,
}

/// A named table with an appendix key for its rest.
#[derive(Debug, Clone, Serialize)]
pub struct NamedTable {
    /// Table name.
    pub name: String,
    /// Rows (body part).
    pub table: TableData,
    /// Appendix key of the rest.
    pub more: Option<String>,
}

pub(crate) fn additional_steps(ctx: &Context<'_>, extras: &mut Extras) -> Vec<AdditionalStep> {
    ctx.results
        .doc()
        .steps
        .iter()
        .filter(|s| !uses::KNOWN.contains(&s.uses.as_str()))
        .map(|step| AdditionalStep {
            id: step.id.clone(),
            uses: step.uses.clone(),
            version: step.version.clone(),
            tables: step
                .tables
                .keys()
                .filter_map(|name| {
                    let rows = table_of(step, name)?;
                    let mut table = generic(&rows);
                    let keep = BODY_ROWS.min(20);
                    let more = table.split_off(keep).map(|rest| {
                        let title = format!("Table \"{name}\" of step \"{}\" (continued)", step.id);
                        extras.appendix(title, rest, table_file(&step.id, name))
                    });
                    Some(NamedTable { name: name.clone(), table, more })
                })
                .collect(),
            findings: step.findings.iter().map(|f| format!("{}: {}", f.level, f.message)).collect(),
            error: step.error.clone(),
        })
        .collect()
}
