//! The matrix builder: each VCF record that passes FILTER and the site filters becomes one
//! locus of the locus-major code buffer, with its name, place and compacted alleles.

use super::*;

/// Accumulates records into the locus-major code buffer.
pub(super) struct MatrixBuilder<'a> {
    columns: SampleColumns,
    header_lines: usize,
    options: &'a VcfOptions<'a>,
    pub(super) records: usize,
    loci: Vec<LocusMeta>,
    codes: Vec<AlleleCode>,
    names: HashSet<String>,
    /// Indices plus one of the current record's calls, two per read sample.
    calls: Vec<u16>,
    filtered: BTreeMap<String, usize>,
    no_gt: Vec<String>,
    sites: SiteTally,
    bad_calls: CallTally,
}

impl<'a> MatrixBuilder<'a> {
    pub(super) fn new(columns: SampleColumns, header_lines: usize, options: &'a VcfOptions<'a>) -> Self {
        MatrixBuilder {
            columns,
            header_lines,
            options,
            records: 0,
            loci: Vec::new(),
            codes: Vec::new(),
            names: HashSet::new(),
            calls: Vec::new(),
            filtered: BTreeMap::new(),
            no_gt: Vec::new(),
            sites: SiteTally::default(),
            bad_calls: CallTally::default(),
        }
    }

    /// The 1-based line of the next record.
    pub(super) fn next_line(&self) -> usize {
        self.header_lines + self.records + 1
    }

    pub(super) fn record_error(&self, line: usize, field: &str, problem: String, help: &str) -> DataError {
        DataError::VcfRecord {
            at: Location::line(self.options.file, line),
            field: field.into(),
            problem,
            help: help.into(),
        }
    }

    pub(super) fn add_record(&mut self, record: &vcf::Record, line: usize) -> Result<(), DataError> {
        self.records += 1;
        let chromosome = record.reference_sequence_name();
        let position = match record.variant_start() {
            Some(Ok(p)) => usize::from(p),
            Some(Err(e)) => {
                return Err(self.record_error(
                    line,
                    "POS",
                    format!("the position cannot be read ({e})"),
                    "POS is a whole number ≥ 1",
                ));
            }
            None => {
                return Err(self.record_error(
                    line,
                    "POS",
                    "the position is missing (\".\")".into(),
                    "POS is a whole number ≥ 1",
                ));
            }
        };
        // noodles gives a missing FILTER (".") as an empty field.
        let filter = match record.filters().as_ref() {
            "" => ".".to_string(),
            value => value.to_string(),
        };
        if !filter.split(';').all(|value| self.options.accept_filters.iter().any(|a| a == value)) {
            *self.filtered.entry(filter).or_default() += 1;
            return Ok(());
        }
        let alleles = allele_list(record);
        let name = self.locus_name(record.ids().as_ref(), chromosome, position);
        if alleles.len() > MAX_ALLELES_PER_LOCUS {
            return Err(DataError::TooManyAlleles { file: self.options.file.into(), locus: excerpt(&name) });
        }
        self.check_size(line)?;
        let samples = record.samples();
        let Some(gt_index) = samples.keys().iter().position(|k| k == "GT") else {
            self.no_gt.push(name);
            return Ok(());
        };
        self.read_calls(&samples, gt_index, alleles.len(), line)?;
        let (labels, site_codes) = compact(&self.calls, &alleles);
        if let Some(reason) = site_verdict(&site_codes, labels.len(), self.options.sites) {
            self.sites.record(reason, &name);
            return Ok(());
        }
        self.names.insert(name.clone());
        self.codes.extend_from_slice(&site_codes);
        self.loci.push(LocusMeta {
            name,
            alleles: labels,
            chromosome: Some(chromosome.to_string()),
            position: u64::try_from(position).ok(),
        });
        Ok(())
    }

    /// Refuses the site that would take the matrix past the locus or genotype limit.
    pub(super) fn check_size(&self, line: usize) -> Result<(), DataError> {
        let loci = self.loci.len() as u64 + 1;
        let genotypes = loci * self.columns.samples.len() as u64;
        for (what, found) in [(Limited::Loci, loci), (Limited::Genotypes, genotypes)] {
            if exceeds(what, found) {
                return Err(DataError::TooLarge { at: Location::line(self.options.file, line), what, found });
            }
        }
        Ok(())
    }

    /// ID when set and unused, else CHROM:POS, else CHROM:POS:n.
    pub(super) fn locus_name(&self, id: &str, chromosome: &str, position: usize) -> String {
        if id != "." && !id.is_empty() && !self.names.contains(id) {
            return id.to_string();
        }
        let base = format!("{chromosome}:{position}");
        if !self.names.contains(&base) {
            return base;
        }
        (2..).map(|n| format!("{base}:{n}")).find(|candidate| !self.names.contains(candidate)).unwrap_or(base)
    }

    pub(super) fn read_calls(
        &mut self,
        samples: &vcf::record::Samples<'_>,
        gt_index: usize,
        alleles: usize,
        line: usize,
    ) -> Result<(), DataError> {
        let read = self.columns.samples.len();
        self.calls.clear();
        self.calls.resize(read * 2, 0);
        let mut columns = 0;
        for (column, sample) in samples.iter().enumerate() {
            columns += 1;
            let Some(&Some(at)) = self.columns.matrix_index.get(column) else { continue };
            let text = sample.as_ref().split(':').nth(gt_index).unwrap_or(".");
            match parse_gt(text, alleles) {
                Ok((a, b)) => (self.calls[2 * at], self.calls[2 * at + 1]) = (a, b),
                Err(problem) => self.bad_call(line, column, text, problem)?,
            }
        }
        if columns != self.columns.names.len() {
            let problem =
                format!("the record has {columns} sample column(s) but the header names {}", self.columns.names.len());
            return Err(self.record_error(
                line,
                "samples",
                problem,
                "every record needs FORMAT and one column per sample of the #CHROM line",
            ));
        }
        Ok(())
    }

    pub(super) fn bad_call(
        &mut self,
        line: usize,
        column: usize,
        text: &str,
        problem: CallProblem,
    ) -> Result<(), DataError> {
        let sample = &self.columns.names[column];
        if self.options.strict {
            return Err(DataError::BadCell {
                at: Location::line(self.options.file, line),
                column: sample.clone(),
                text: text.into(),
                problem: problem.describe().into(),
            });
        }
        let entry =
            self.bad_calls.by_problem.entry(problem).or_insert_with(|| (0, line, sample.clone(), text.to_string()));
        entry.0 += 1;
        Ok(())
    }

    pub(super) fn finish(self) -> Result<(GenotypeMatrix, Vec<Finding>), DataError> {
        let file = self.options.file;
        let mut findings = self.columns.findings;
        if !self.filtered.is_empty() {
            let total: usize = self.filtered.values().sum();
            let values: Vec<String> = self.filtered.iter().map(|(value, n)| format!("{value} ×{n}")).collect();
            let accepted = self.options.accept_filters.join(", ");
            let message = format!(
                "{file}: {total} record(s) not read because of their FILTER value ({}); accepted: {accepted} (accept_filters)",
                values.join(", ")
            );
            findings.push(Finding::info(
                "filtered-records",
                message,
                Where { file: Some(file.into()), ..Where::default() },
            ));
        }
        if !self.no_gt.is_empty() {
            let message = format!(
                "{file}: {} record(s) have no GT field and are not read: {}",
                self.no_gt.len(),
                name_list(&self.no_gt)
            );
            findings.push(Finding::warning(
                "no-genotype-field",
                message,
                Where { file: Some(file.into()), ..Where::default() },
            ));
        }
        findings.extend(self.sites.findings(file, self.options.sites));
        findings.extend(self.bad_calls.findings(file));
        if self.loci.is_empty() {
            return Err(DataError::NoSites { file: file.into(), records: self.records });
        }
        let matrix = GenotypeMatrix::new(self.columns.samples, self.loci, self.codes).map_err(|e| match e {
            MatrixError::TooManyAlleles { locus, .. } => DataError::TooManyAlleles { file: file.into(), locus },
            // The builder writes two codes per read sample and locus, each within its labels.
            other => DataError::Csv { at: Location::file(file), message: format!("internal error: {other}") },
        })?;
        Ok((matrix, findings))
    }
}

/// REF then the ALT alleles (`.` means none).
pub(super) fn allele_list(record: &vcf::Record) -> Vec<String> {
    let mut alleles = vec![record.reference_bases().to_string()];
    let alternate = record.alternate_bases();
    let alternate = alternate.as_ref();
    if alternate != "." && !alternate.is_empty() {
        alleles.extend(alternate.split(',').map(str::to_string));
    }
    alleles
}

/// The alleles the calls use, coded 1, 2, … in REF/ALT order, with their labels (sequences
/// when all of the record's alleles make valid, distinct labels, else indices), and the codes.
pub(super) fn compact(calls: &[u16], alleles: &[String]) -> (Vec<String>, Vec<AlleleCode>) {
    let mut used = vec![false; alleles.len() + 1];
    for &c in calls {
        used[c as usize] = true;
    }
    let distinct: HashSet<&str> = alleles.iter().map(String::as_str).collect();
    let sequences = distinct.len() == alleles.len() && alleles.iter().all(|a| is_valid_label(a));
    let mut code_of = vec![0u16; alleles.len() + 1];
    let mut labels = Vec::new();
    for index in 0..alleles.len() {
        if used[index + 1] {
            labels.push(if sequences { alleles[index].clone() } else { index.to_string() });
            // At most 65535 alleles are listed before this fails; GenotypeMatrix then refuses.
            code_of[index + 1] = u16::try_from(labels.len()).unwrap_or(u16::MAX);
        }
    }
    (labels, calls.iter().map(|&c| AlleleCode(code_of[c as usize])).collect())
}
