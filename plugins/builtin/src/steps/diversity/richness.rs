//! Allelic richness and private allelic richness of every group, rarefied per locus to a
//! common number of gene copies over the comparison set (see the step's module doc).

use crate::stats::heterozygosity::MIN_TYPED_INDIVIDUALS;
use crate::stats::rarefaction::{RarefiedRichness, rarefy_locus};

use super::GroupEstimates;

/// A locus left out of rarefaction because some compared groups have too few typed individuals.
pub(super) struct DroppedLocus {
    /// View locus index.
    pub locus: usize,
    /// (group index, typed individuals) of the groups short of the rarefaction size.
    pub short: Vec<(usize, u32)>,
}

/// Rarefied richness of every group at every locus.
pub(super) struct Richness {
    /// Whether each group is in the comparison set (at least two samples).
    pub compared: Vec<bool>,
    /// g, the gene copies rarefied to, per locus; `None` where the locus is not rarefied.
    pub copies: Vec<Option<u32>>,
    /// `values[group][locus]`.
    values: Vec<Vec<Option<RarefiedRichness>>>,
    /// Loci dropped for every group.
    pub dropped: Vec<DroppedLocus>,
    /// Individuals to rarefy to when the recipe says so.
    pub requested: Option<u32>,
}

/// Means of one group over the rarefied loci.
pub(super) struct GroupRichness {
    pub richness: Option<f64>,
    pub private_richness: Option<f64>,
    pub smallest_copies: Option<u32>,
}

impl Richness {
    /// Number of groups compared.
    pub fn compared_groups(&self) -> usize {
        self.compared.iter().filter(|&&c| c).count()
    }

    /// A(g) and π(g) at one locus of one group; π is `None` with fewer than two groups compared.
    pub fn at(&self, group: usize, locus: usize) -> (Option<f64>, Option<f64>) {
        let value = self.values[group][locus];
        let private = value.filter(|_| self.compared_groups() >= 2).map(|v| v.private_richness);
        (value.map(|v| v.richness), private)
    }

    /// Mean A(g) and π(g) of one group over the loci rarefied, and the smallest g among them.
    pub fn group(&self, group: usize) -> GroupRichness {
        let loci = || (0..self.copies.len()).filter(|&l| self.values[group][l].is_some());
        GroupRichness {
            richness: crate::stats::mean(loci().filter_map(|l| self.at(group, l).0)),
            private_richness: crate::stats::mean(loci().filter_map(|l| self.at(group, l).1)),
            smallest_copies: loci().filter_map(|l| self.copies[l]).min(),
        }
    }
}

/// Rarefies every locus over the groups with at least two samples.
pub(super) fn rarefy(groups: &[GroupEstimates], requested: Option<u32>) -> Richness {
    let loci = groups.first().map_or(0, |g| g.loci.len());
    let compared: Vec<bool> = groups.iter().map(|g| g.group.samples.len() >= MIN_TYPED_INDIVIDUALS as usize).collect();
    let members: Vec<usize> = (0..groups.len()).filter(|&g| compared[g]).collect();
    let needed = requested.unwrap_or(MIN_TYPED_INDIVIDUALS).max(MIN_TYPED_INDIVIDUALS);
    let mut richness = Richness {
        compared,
        copies: vec![None; loci],
        values: vec![vec![None; loci]; groups.len()],
        dropped: Vec::new(),
        requested,
    };
    let mut slices: Vec<&[u32]> = Vec::with_capacity(members.len());
    for locus in 0..loci {
        if members.is_empty() {
            break;
        }
        let typed = |g: usize| groups[g].loci[locus].heterozygosity.typed;
        let short: Vec<(usize, u32)> = members.iter().filter(|&&g| typed(g) < needed).map(|&g| (g, typed(g))).collect();
        if !short.is_empty() {
            richness.dropped.push(DroppedLocus { locus, short });
            continue;
        }
        let individuals = requested.unwrap_or_else(|| members.iter().map(|&g| typed(g)).min().unwrap_or(0));
        let copies = 2 * individuals;
        slices.clear();
        slices.extend(members.iter().map(|&g| groups[g].loci[locus].allele_copies.as_slice()));
        let Some(rarefied) = rarefy_locus(&slices, copies) else { continue };
        richness.copies[locus] = Some(copies);
        for (&g, value) in members.iter().zip(rarefied) {
            richness.values[g][locus] = Some(value);
        }
    }
    richness
}
