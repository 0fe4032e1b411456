//! Marker models: what a locus is, how its alleles are labelled, how it starts and mutates.

use std::fmt;

use crate::error::SimError;
use crate::random::{SimRng, chance_threshold};

/// How the alleles of a group of loci behave.
#[derive(Clone, Debug, PartialEq)]
pub enum MarkerModel {
    /// A microsatellite under the stepwise mutation model.
    Microsatellite(MicrosatelliteModel),
    /// A biallelic single-nucleotide polymorphism without mutation.
    Snp(SnpModel),
}

/// Parameters of microsatellite loci under the stepwise mutation model (Ohta & Kimura 1973):
/// a mutation adds or removes one repeat unit with equal probability.
///
/// Per-locus details are drawn from the seed: each locus gets its own size grid (the lowest
/// size is `size_range.0` plus a random offset below `repeat_length`, as flanking sequence
/// makes real loci differ), a starting modal size in the middle half of the grid, and a
/// starting spread.
#[derive(Clone, Debug, PartialEq)]
pub struct MicrosatelliteModel {
    /// Mutations per gene copy per generation, in `[0, 1]` (typically 1e-4 to 1e-3).
    pub mutation_rate: f64,
    /// Length of the repeat unit in base pairs (2 for dinucleotide, 4 for tetranucleotide).
    pub repeat_length: u16,
    /// Smallest and largest allowed allele size in base pairs. A mutation that would leave
    /// the range goes one repeat the other way instead (a reflecting boundary).
    pub size_range: (u16, u16),
    /// Range of the starting spread, in repeat units: a locus with spread `w` starts with
    /// `2w − 1` consecutive alleles whose frequencies fall off linearly from the mode
    /// (weights `w − |k|`). A spread of 1 starts monomorphic.
    pub initial_spread: (u16, u16),
}

impl MicrosatelliteModel {
    /// A model with these repeats, size range and starting spread, and no mutation rate yet (for
    /// [`LocusSpec::microsatellite_panel`], which gives each locus its own).
    pub fn shape(repeat_length: u16, size_range: (u16, u16), initial_spread: (u16, u16)) -> MicrosatelliteModel {
        MicrosatelliteModel { mutation_rate: 0.0, repeat_length, size_range, initial_spread }
    }
}

impl Default for MicrosatelliteModel {
    /// Tetranucleotide repeats from 140 to 260 bp, μ = 5·10⁻⁴, starting spread 2–6 repeats.
    fn default() -> Self {
        Self { mutation_rate: 5e-4, repeat_length: 4, size_range: (140, 260), initial_spread: (2, 6) }
    }
}

/// Parameters of biallelic SNP loci: no mutation; the starting minor-allele frequency of each
/// locus is drawn uniformly from `minor_allele_frequency`.
#[derive(Clone, Debug, PartialEq)]
pub struct SnpModel {
    /// Lowest and highest starting minor-allele frequency, within `[0, 0.5]`.
    pub minor_allele_frequency: (f64, f64),
}

impl Default for SnpModel {
    /// Minor-allele frequencies uniform on (0.05, 0.5).
    fn default() -> Self {
        Self { minor_allele_frequency: (0.05, 0.5) }
    }
}

/// One locus to simulate: its name (a column of the wide table) and its model.
#[derive(Clone, Debug, PartialEq)]
pub struct LocusSpec {
    /// Locus name, unique within a simulation.
    pub name: String,
    /// How the locus behaves.
    pub model: MarkerModel,
}

impl LocusSpec {
    /// `count` loci named `prefix` plus a zero-padded number from 1 (at least two digits:
    /// `Tk01`, `Tk02`, …), all with the same model.
    pub fn numbered(prefix: &str, count: usize, model: MarkerModel) -> Vec<LocusSpec> {
        let width = count.to_string().len().max(2);
        (1..=count)
            .map(|number| LocusSpec { name: format!("{prefix}{number:0width$}"), model: model.clone() })
            .collect()
    }

    /// A microsatellite panel: one locus per mutation rate in `rates`, named `prefix` plus a
    /// two-digit number from 1 (`Tk01`, …); the first `first.0` loci take the repeat length,
    /// size range and starting spread of `first.1`, the others those of `rest` (the templates'
    /// own mutation rates are not used).
    pub fn microsatellite_panel(
        prefix: &str,
        rates: &[f64],
        first: (usize, MicrosatelliteModel),
        rest: MicrosatelliteModel,
    ) -> Vec<LocusSpec> {
        rates
            .iter()
            .enumerate()
            .map(|(index, &mutation_rate)| {
                let template = if index < first.0 { &first.1 } else { &rest };
                let model = MicrosatelliteModel { mutation_rate, ..template.clone() };
                LocusSpec { name: format!("{prefix}{:02}", index + 1), model: MarkerModel::Microsatellite(model) }
            })
            .collect()
    }

    pub(crate) fn validate(&self) -> Result<(), SimError> {
        let invalid = |reason: String| Err(SimError::InvalidLocus { locus: self.name.clone(), reason });
        if self.name.is_empty() {
            return invalid("the name is empty".into());
        }
        match &self.model {
            MarkerModel::Microsatellite(model) => {
                let (low, high) = model.size_range;
                let (spread_low, spread_high) = model.initial_spread;
                if !(0.0..=1.0).contains(&model.mutation_rate) {
                    return invalid(format!("mutation rate {} is outside [0, 1]", model.mutation_rate));
                }
                if model.repeat_length == 0 {
                    return invalid("repeat length is 0".into());
                }
                if low == 0 || high < low || u32::from(high - low) < 4 * u32::from(model.repeat_length) {
                    return invalid(format!(
                        "size range {low}..{high} must start above 0 and span at least four repeats of {} bp",
                        model.repeat_length
                    ));
                }
                if spread_low == 0 || spread_high < spread_low {
                    return invalid(format!("initial spread {spread_low}..{spread_high} must satisfy 1 ≤ low ≤ high"));
                }
            }
            MarkerModel::Snp(model) => {
                let (low, high) = model.minor_allele_frequency;
                if !(0.0 <= low && low <= high && high <= 0.5) {
                    return invalid(format!("minor-allele frequency range {low}..{high} must lie within [0, 0.5]"));
                }
            }
        }
        Ok(())
    }
}

/// What kind of locus a simulated [`Locus`] is, with the details needed to label its alleles.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum LocusKind {
    /// Microsatellite: allele codes are sizes in base pairs, on the grid
    /// `min_size + k · repeat_length`.
    Microsatellite {
        /// Repeat unit in base pairs.
        repeat_length: u16,
        /// Smallest size on this locus's grid.
        min_size: u16,
        /// Largest size on this locus's grid.
        max_size: u16,
    },
    /// SNP: allele code 0 is `bases[0]`, code 1 is `bases[1]`.
    Snp {
        /// The two nucleotides.
        bases: [char; 2],
    },
}

/// A simulated locus: its name, kind and (for microsatellites) mutation rate.
#[derive(Clone, Debug, PartialEq)]
pub struct Locus {
    /// Locus name.
    pub name: String,
    /// Kind and allele-labelling details.
    pub kind: LocusKind,
    /// Mutations per gene copy per generation.
    pub mutation_rate: f64,
}

impl Locus {
    /// The text label of allele code `code` as it appears in the wide table (`152`, `A`).
    pub fn label(&self, code: u16) -> String {
        match &self.kind {
            LocusKind::Microsatellite { .. } => code.to_string(),
            LocusKind::Snp { bases } => bases[usize::from(code.min(1))].to_string(),
        }
    }
}

impl fmt::Display for Locus {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.name)
    }
}

/// A locus ready to simulate: its public description, the distribution its ancestral gene
/// copies are drawn from, and its mutation threshold.
#[derive(Clone, Debug)]
pub(crate) struct PreparedLocus {
    pub(crate) locus: Locus,
    /// (allele code, cumulative probability) in increasing cumulative order, ending at 1.
    initial_distribution: Vec<(u16, f64)>,
    /// [`SimRng::chance`] threshold of one mutation per gene copy; 0 means never.
    pub(crate) mutation_threshold: u32,
}

/// Nucleotide pairs a SNP locus may carry, transitions first as they are commoner.
const SNP_BASES: [[char; 2]; 6] = [['A', 'G'], ['C', 'T'], ['A', 'C'], ['G', 'T'], ['A', 'T'], ['C', 'G']];

impl PreparedLocus {
    /// Draws the per-locus details of `spec` from `rng`.
    pub(crate) fn draw(spec: &LocusSpec, rng: &mut SimRng) -> PreparedLocus {
        match &spec.model {
            MarkerModel::Microsatellite(model) => Self::draw_microsatellite(&spec.name, model, rng),
            MarkerModel::Snp(model) => Self::draw_snp(&spec.name, model, rng),
        }
    }

    fn draw_microsatellite(name: &str, model: &MicrosatelliteModel, rng: &mut SimRng) -> PreparedLocus {
        let step = model.repeat_length;
        let min_size = model.size_range.0 + rng.index(usize::from(step)) as u16;
        let grid_points = usize::from((model.size_range.1 - min_size) / step) + 1;
        let max_size = min_size + (grid_points as u16 - 1) * step;
        // Mode in the middle half of the grid, so that drift and mutation rarely meet a bound.
        let middle_start = grid_points / 4;
        let middle_len = (grid_points / 2).max(1);
        let mode = middle_start + rng.index(middle_len);
        let (spread_low, spread_high) = model.initial_spread;
        let spread = usize::from(spread_low) + rng.index(usize::from(spread_high - spread_low) + 1);
        let weights: Vec<(u16, f64)> = (0..grid_points)
            .filter_map(|point| {
                let distance = point.abs_diff(mode);
                (distance < spread).then(|| (min_size + point as u16 * step, (spread - distance) as f64))
            })
            .collect();
        PreparedLocus {
            locus: Locus {
                name: name.to_string(),
                kind: LocusKind::Microsatellite { repeat_length: step, min_size, max_size },
                mutation_rate: model.mutation_rate,
            },
            initial_distribution: cumulative(weights),
            mutation_threshold: chance_threshold(model.mutation_rate),
        }
    }

    fn draw_snp(name: &str, model: &SnpModel, rng: &mut SimRng) -> PreparedLocus {
        let (low, high) = model.minor_allele_frequency;
        let minor = low + (high - low) * rng.unit();
        let bases = SNP_BASES[rng.index(SNP_BASES.len())];
        // Which base is the minor one is itself random, so code 1 is not always the rarer.
        let minor_code = (rng.bits() & 1) as u16;
        let weights =
            if minor_code == 1 { vec![(0, 1.0 - minor), (1, minor)] } else { vec![(0, minor), (1, 1.0 - minor)] };
        PreparedLocus {
            locus: Locus { name: name.to_string(), kind: LocusKind::Snp { bases }, mutation_rate: 0.0 },
            initial_distribution: cumulative(weights),
            mutation_threshold: 0,
        }
    }

    /// One ancestral gene copy, drawn from the starting distribution.
    pub(crate) fn draw_initial_allele(&self, rng: &mut SimRng) -> u16 {
        let u = rng.unit();
        self.initial_distribution
            .iter()
            .find(|(_, cumulative)| u < *cumulative)
            .or(self.initial_distribution.last())
            .map_or(0, |(code, _)| *code)
    }

    /// The allele a mutation turns `code` into: one repeat up or down with equal probability,
    /// reflected at the ends of the grid. SNPs never mutate, so they are returned unchanged.
    pub(crate) fn mutate(&self, code: u16, rng: &mut SimRng) -> u16 {
        match self.locus.kind {
            LocusKind::Microsatellite { repeat_length, min_size, max_size } => {
                let up = rng.bits() & 1 == 1;
                let can_go_up = code <= max_size - repeat_length;
                let can_go_down = code >= min_size + repeat_length;
                if (up && can_go_up) || !can_go_down { code + repeat_length } else { code - repeat_length }
            }
            LocusKind::Snp { .. } => code,
        }
    }
}

/// Turns (code, weight) pairs into (code, cumulative probability) pairs ending at exactly 1.
fn cumulative(weights: Vec<(u16, f64)>) -> Vec<(u16, f64)> {
    let total: f64 = weights.iter().map(|(_, weight)| weight).sum();
    let mut running = 0.0;
    let mut out: Vec<(u16, f64)> = weights
        .into_iter()
        .map(|(code, weight)| {
            running += weight / total;
            (code, running)
        })
        .collect();
    if let Some(last) = out.last_mut() {
        last.1 = 1.0;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::random::Stream;

    /// A panel names its loci from 01 and gives each its own rate on the template of its part
    /// (common practice: the definition, locus by locus).
    #[test]
    fn microsatellite_panel_names_loci_and_takes_each_rate() {
        let panel = LocusSpec::microsatellite_panel(
            "Ab",
            &[1e-4, 2e-4, 3e-4],
            (2, MicrosatelliteModel::shape(4, (140, 260), (2, 6))),
            MicrosatelliteModel::shape(2, (96, 190), (3, 8)),
        );
        let names: Vec<&str> = panel.iter().map(|l| l.name.as_str()).collect();
        assert_eq!(names, ["Ab01", "Ab02", "Ab03"]);
        let expected = [(1e-4, 4, (140, 260), (2, 6)), (2e-4, 4, (140, 260), (2, 6)), (3e-4, 2, (96, 190), (3, 8))];
        for (locus, (rate, repeat, range, spread)) in panel.iter().zip(expected) {
            let model = MicrosatelliteModel {
                mutation_rate: rate,
                repeat_length: repeat,
                size_range: range,
                initial_spread: spread,
            };
            assert_eq!(locus.model, MarkerModel::Microsatellite(model), "{}", locus.name);
        }
    }

    fn microsatellite(spread: (u16, u16)) -> LocusSpec {
        LocusSpec {
            name: "Ms1".into(),
            model: MarkerModel::Microsatellite(MicrosatelliteModel {
                mutation_rate: 1e-3,
                repeat_length: 4,
                size_range: (140, 220),
                initial_spread: spread,
            }),
        }
    }

    #[test]
    fn numbered_pads_to_two_digits_or_more() {
        let names: Vec<String> =
            LocusSpec::numbered("Tk", 3, MarkerModel::Snp(SnpModel::default())).into_iter().map(|l| l.name).collect();
        assert_eq!(names, ["Tk01", "Tk02", "Tk03"]);
        let many = LocusSpec::numbered("L", 120, MarkerModel::Snp(SnpModel::default()));
        assert_eq!(many[0].name, "L001");
        assert_eq!(many[119].name, "L120");
    }

    #[test]
    fn microsatellite_alleles_lie_on_the_locus_grid() {
        let mut rng = SimRng::new(1, Stream::Setup);
        for _ in 0..20 {
            let locus = PreparedLocus::draw(&microsatellite((2, 6)), &mut rng);
            let LocusKind::Microsatellite { repeat_length, min_size, max_size } = locus.locus.kind else {
                panic!("expected a microsatellite");
            };
            assert!((140..144).contains(&min_size) && max_size <= 220);
            for _ in 0..200 {
                let mut allele = locus.draw_initial_allele(&mut rng);
                assert_eq!((allele - min_size) % repeat_length, 0);
                for _ in 0..50 {
                    allele = locus.mutate(allele, &mut rng);
                    assert!((min_size..=max_size).contains(&allele));
                    assert_eq!((allele - min_size) % repeat_length, 0);
                }
            }
        }
    }

    #[test]
    fn mutation_moves_exactly_one_repeat_and_reflects_at_bounds() {
        let mut rng = SimRng::new(2, Stream::Setup);
        let locus = PreparedLocus::draw(&microsatellite((1, 1)), &mut rng);
        let LocusKind::Microsatellite { min_size, max_size, .. } = locus.locus.kind else {
            panic!("expected a microsatellite");
        };
        for _ in 0..50 {
            assert_eq!(locus.mutate(min_size, &mut rng), min_size + 4);
            assert_eq!(locus.mutate(max_size, &mut rng), max_size - 4);
            let middle = min_size + 20;
            let moved = locus.mutate(middle, &mut rng);
            assert!(moved == middle + 4 || moved == middle - 4);
        }
    }

    #[test]
    fn spread_of_one_starts_monomorphic() {
        let mut rng = SimRng::new(3, Stream::Setup);
        let locus = PreparedLocus::draw(&microsatellite((1, 1)), &mut rng);
        let first = locus.draw_initial_allele(&mut rng);
        assert!((0..100).all(|_| locus.draw_initial_allele(&mut rng) == first));
    }

    #[test]
    fn snp_starting_frequency_is_within_range() {
        let mut rng = SimRng::new(4, Stream::Setup);
        let spec =
            LocusSpec { name: "S1".into(), model: MarkerModel::Snp(SnpModel { minor_allele_frequency: (0.2, 0.3) }) };
        for _ in 0..10 {
            let locus = PreparedLocus::draw(&spec, &mut rng);
            let ones = (0..4000).filter(|_| locus.draw_initial_allele(&mut rng) == 1).count() as f64 / 4000.0;
            let minor = ones.min(1.0 - ones);
            // Binomial sd of a frequency from 4000 draws ≤ 0.008; 0.03 margin ≈ 4 sd (common practice).
            assert!((0.17..0.33).contains(&minor), "minor-allele frequency {minor}");
            assert_eq!(locus.mutate(1, &mut rng), 1);
        }
    }

    #[test]
    fn labels_follow_the_locus_kind() {
        let size = Locus {
            name: "M".into(),
            kind: LocusKind::Microsatellite { repeat_length: 2, min_size: 140, max_size: 180 },
            mutation_rate: 0.0,
        };
        assert_eq!(size.label(152), "152");
        let snp = Locus { name: "S".into(), kind: LocusKind::Snp { bases: ['A', 'G'] }, mutation_rate: 0.0 };
        assert_eq!((snp.label(0), snp.label(1)), ("A".to_string(), "G".to_string()));
    }

    #[test]
    fn invalid_specs_are_refused_with_the_locus_name() {
        let mut bad = microsatellite((2, 6));
        if let MarkerModel::Microsatellite(model) = &mut bad.model {
            model.mutation_rate = 1.5;
        }
        let message = bad.validate().unwrap_err().to_string();
        assert!(message.contains("Ms1") && message.contains("mutation rate"), "{message}");
        let snp =
            LocusSpec { name: "S".into(), model: MarkerModel::Snp(SnpModel { minor_allele_frequency: (0.3, 0.6) }) };
        assert!(snp.validate().is_err());
        let narrow = LocusSpec {
            name: "N".into(),
            model: MarkerModel::Microsatellite(MicrosatelliteModel {
                size_range: (140, 148),
                ..MicrosatelliteModel::default()
            }),
        };
        assert!(narrow.validate().is_err());
        assert!(microsatellite((2, 6)).validate().is_ok());
    }
}
