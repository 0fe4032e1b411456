//! Runs of homozygosity: a deterministic scan of each individual's calls along the chromosomes
//! (docs/methods.md, "Runs of homozygosity").
//!
//! The loci with a chromosome and a position are placed in order of chromosome name, then
//! position (then view order). On each chromosome, for each individual, a run opens at a
//! homozygous call and takes in the following calls while it holds at most
//! [`RunSettings::max_heterozygous`] heterozygous and [`RunSettings::max_missing`] untyped
//! calls; the call that would exceed either allowance closes it (and opens nothing), as does a
//! gap between neighbouring loci larger than [`RunSettings::max_gap_bp`] or the end of the
//! chromosome. A closed run ends at its last homozygous call (trailing heterozygous or untyped
//! calls are dropped). It is kept when its length (end − start, in bp) is at least
//! [`RunSettings::min_length_bp`], it spans at least [`RunSettings::min_snps`] loci and holds
//! at least [`RunSettings::min_density_per_mb`] loci per Mb of its length.
//!
//! The scan walks the loci once, updating every individual's state at each locus, so it reads
//! the locus-major genotype buffer in order.

use std::collections::BTreeMap;

use popgauge_abi::{GenotypeView, LocusIdx, SampleIdx};

/// Bases per Mb.
pub const BP_PER_MB: f64 = 1_000_000.0;

/// The scan's parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RunSettings {
    /// Shortest run kept, in bp.
    pub min_length_bp: u64,
    /// Fewest loci in a run kept.
    pub min_snps: u32,
    /// Heterozygous calls a run may hold.
    pub max_heterozygous: u32,
    /// Untyped calls a run may hold.
    pub max_missing: u32,
    /// Largest distance between neighbouring loci inside a run.
    pub max_gap_bp: u64,
    /// Fewest loci per Mb of run length.
    pub min_density_per_mb: f64,
}

/// One individual's call at one locus.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Call {
    /// Both alleles the same.
    Homozygous,
    /// Two different alleles.
    Heterozygous,
    /// Not typed at both alleles.
    Missing,
}

/// A run of homozygosity on one chromosome.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Run {
    /// Index into [`Panel::chromosomes`].
    pub chromosome: usize,
    /// Position of its first locus, bp.
    pub start: u64,
    /// Position of its last (homozygous) locus, bp.
    pub end: u64,
    /// Loci from first to last.
    pub snps: u32,
    /// Heterozygous calls inside.
    pub heterozygous: u32,
    /// Untyped calls inside.
    pub missing: u32,
}

impl Run {
    /// end − start, in bp.
    pub fn length_bp(&self) -> u64 {
        self.end - self.start
    }

    /// Length in Mb.
    pub fn length_mb(&self) -> f64 {
        self.length_bp() as f64 / BP_PER_MB
    }
}

/// The loci placed on chromosomes, in scan order.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Panel {
    /// Chromosome names, sorted.
    pub chromosomes: Vec<String>,
    /// Per chromosome, its (position, view locus) pairs in scan order.
    pub placed: Vec<Vec<(u64, LocusIdx)>>,
    /// View loci without a chromosome or position.
    pub unplaced: usize,
}

impl Panel {
    /// Places the view's loci.
    pub fn of(view: &GenotypeView<'_>) -> Panel {
        let mut by_chromosome: BTreeMap<&str, Vec<(u64, LocusIdx)>> = BTreeMap::new();
        let mut unplaced = 0;
        for locus in 0..view.n_loci() {
            let meta = view.locus(locus);
            match (meta.chromosome.as_deref(), meta.position) {
                (Some(chromosome), Some(position)) => {
                    by_chromosome.entry(chromosome).or_default().push((position, locus))
                }
                _ => unplaced += 1,
            }
        }
        let mut panel = Panel { unplaced, ..Panel::default() };
        for (name, mut loci) in by_chromosome {
            loci.sort_unstable();
            panel.chromosomes.push(name.to_string());
            panel.placed.push(loci);
        }
        panel
    }

    /// Placed loci.
    pub fn placed_loci(&self) -> usize {
        self.placed.iter().map(Vec::len).sum()
    }

    /// Σ over chromosomes of last − first position, in bp: the genome length F_ROH divides by.
    pub fn length_bp(&self) -> u64 {
        self.placed.iter().map(|loci| loci.last().map_or(0, |l| l.0) - loci.first().map_or(0, |f| f.0)).sum()
    }
}

/// One individual's open run.
#[derive(Debug, Clone, Copy, Default)]
struct OpenRun {
    start: u64,
    snps: u32,
    heterozygous: u32,
    missing: u32,
    /// The run as it stands at its last homozygous call: end, snps, heterozygous, missing.
    at_last_homozygous: (u64, u32, u32, u32),
}

/// The scan state of one individual on one chromosome.
#[derive(Debug, Clone, Default)]
pub struct Scanner {
    open: Option<OpenRun>,
}

impl Scanner {
    /// Takes the call at the next locus (at `position` on chromosome `chromosome`); pushes the
    /// run it closes, if any and if kept, onto `runs`.
    pub fn push(&mut self, call: Call, position: u64, chromosome: usize, settings: &RunSettings, runs: &mut Vec<Run>) {
        match (self.open.as_mut(), call) {
            (None, Call::Homozygous) => {
                self.open = Some(OpenRun {
                    start: position,
                    snps: 1,
                    at_last_homozygous: (position, 1, 0, 0),
                    ..OpenRun::default()
                });
            }
            (None, _) => {}
            (Some(run), Call::Homozygous) => {
                run.snps += 1;
                run.at_last_homozygous = (position, run.snps, run.heterozygous, run.missing);
            }
            (Some(run), Call::Heterozygous) if run.heterozygous < settings.max_heterozygous => {
                run.snps += 1;
                run.heterozygous += 1;
            }
            (Some(run), Call::Missing) if run.missing < settings.max_missing => {
                run.snps += 1;
                run.missing += 1;
            }
            (Some(_), _) => self.close(chromosome, settings, runs),
        }
    }

    /// Ends the open run (a gap, the end of a chromosome, or a call over the allowance).
    pub fn close(&mut self, chromosome: usize, settings: &RunSettings, runs: &mut Vec<Run>) {
        let Some(open) = self.open.take() else { return };
        let (end, snps, heterozygous, missing) = open.at_last_homozygous;
        let run = Run { chromosome, start: open.start, end, snps, heterozygous, missing };
        if kept(&run, settings) {
            runs.push(run);
        }
    }
}

fn kept(run: &Run, settings: &RunSettings) -> bool {
    let length = run.length_bp();
    length >= settings.min_length_bp
        && length > 0
        && run.snps >= settings.min_snps
        && f64::from(run.snps) / (length as f64 / BP_PER_MB) >= settings.min_density_per_mb
}

/// The runs of every view sample, and the panel they were found on.
#[derive(Debug, Clone, Default)]
pub struct PanelRuns {
    /// The placed loci.
    pub panel: Panel,
    /// Per view sample, its runs in scan order.
    pub runs: Vec<Vec<Run>>,
}

impl PanelRuns {
    /// Whether F_ROH can be computed: some loci placed and a panel length above 0.
    pub fn available(&self) -> bool {
        self.panel.length_bp() > 0
    }

    /// F_ROH of a sample: total run length / panel length; `None` when not available.
    pub fn f_roh(&self, sample: SampleIdx) -> Option<f64> {
        let genome = self.panel.length_bp();
        (genome > 0).then(|| self.runs[sample].iter().map(Run::length_bp).sum::<u64>() as f64 / genome as f64)
    }
}

/// Scans every view sample along the placed loci.
pub fn scan_view(view: &GenotypeView<'_>, settings: &RunSettings) -> PanelRuns {
    let panel = Panel::of(view);
    let n = view.n_samples();
    let mut runs = vec![Vec::new(); n];
    let mut scanners = vec![Scanner::default(); n];
    for (chromosome, loci) in panel.placed.iter().enumerate() {
        let mut previous: Option<u64> = None;
        for &(position, locus) in loci {
            if previous.is_some_and(|p| position - p > settings.max_gap_bp) {
                for (scanner, found) in scanners.iter_mut().zip(runs.iter_mut()) {
                    scanner.close(chromosome, settings, found);
                }
            }
            previous = Some(position);
            for (sample, (scanner, found)) in scanners.iter_mut().zip(runs.iter_mut()).enumerate() {
                let call = match view.genotype(sample, locus) {
                    Some((a, b)) if a == b => Call::Homozygous,
                    Some(_) => Call::Heterozygous,
                    None => Call::Missing,
                };
                scanner.push(call, position, chromosome, settings, found);
            }
        }
        for (scanner, found) in scanners.iter_mut().zip(runs.iter_mut()) {
            scanner.close(chromosome, settings, found);
        }
    }
    PanelRuns { panel, runs }
}

/// Upper bounds (Mb) of the length classes: < 2, 2–8 (both included), > 8.
pub const CLASS_BOUNDS_MB: [f64; 2] = [2.0, 8.0];

/// Total run length (Mb) in each class of [`CLASS_BOUNDS_MB`].
pub fn class_lengths(runs: &[Run]) -> [f64; 3] {
    let mut classes = [0.0; 3];
    for run in runs {
        let mb = run.length_mb();
        let class = if mb < CLASS_BOUNDS_MB[0] {
            0
        } else if mb <= CLASS_BOUNDS_MB[1] {
            1
        } else {
            2
        };
        classes[class] += mb;
    }
    classes
}
