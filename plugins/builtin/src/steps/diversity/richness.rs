//! Allelic richness and private allelic richness of every group, rarefied per locus to a
//! common number of gene copies over a comparison set (see the step's module doc).
//!
//! Allelic richness compares every group with at least two samples, whatever its year, so that
//! `ar` is on one scale across populations and years. Private allelic richness compares the
//! populations sampled in the same year: across years a population would be compared with
//! itself, and an allele it carries in both years would not count as private to it.

use std::collections::BTreeMap;

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

/// One comparison set rarefied locus by locus.
pub(super) struct Rarefied {
    /// The groups compared (indices into the step's groups), in group order.
    pub members: Vec<usize>,
    /// g, the gene copies rarefied to, per locus; `None` where the locus is not rarefied.
    pub copies: Vec<Option<u32>>,
    /// `values[member][locus]`, member as in `members`.
    values: Vec<Vec<Option<RarefiedRichness>>>,
    /// Loci left out because a member is short of the rarefaction size.
    pub dropped: Vec<DroppedLocus>,
}

/// The populations compared for private allelic richness in one sampling year.
pub(super) struct YearSet {
    pub year: i32,
    pub rarefied: Rarefied,
}

impl YearSet {
    /// Whether private richness is defined: at least two populations compared.
    pub fn compares(&self) -> bool {
        self.rarefied.members.len() >= 2
    }
}

/// Rarefied richness of every group at every locus.
pub(super) struct Richness {
    /// Whether each group is compared at all (at least two samples).
    pub compared: Vec<bool>,
    /// Allelic richness: every compared group, all years.
    pub all_groups: Rarefied,
    /// Private allelic richness: the compared groups of each sampling year, by year.
    pub years: Vec<YearSet>,
    /// Which entry of `years` (and which member there) each compared group is.
    place: Vec<Option<(usize, usize)>>,
    /// Individuals to rarefy to when the recipe says so.
    pub requested: Option<u32>,
}

/// Means of one group over the rarefied loci.
pub(super) struct GroupRichness {
    pub richness: Option<f64>,
    pub private_richness: Option<f64>,
    /// The smallest g among the loci averaged into `richness`.
    pub smallest_copies: Option<u32>,
    /// The smallest g among the loci averaged into `private_richness`.
    pub smallest_private_copies: Option<u32>,
}

impl Rarefied {
    fn member(&self, group: usize) -> Option<usize> {
        self.members.iter().position(|&g| g == group)
    }
}

impl Richness {
    /// A(g) of one group at one locus, rarefied over every compared group, and its g.
    pub fn richness_at(&self, group: usize, locus: usize) -> Option<(f64, u32)> {
        let member = self.all_groups.member(group)?;
        let value = self.all_groups.values[member][locus]?;
        Some((value.richness, self.all_groups.copies[locus]?))
    }

    /// π(g) of one group at one locus among the populations of its year, and its g; `None`
    /// when the locus is not rarefied there or the group is its year's only one compared.
    pub fn private_at(&self, group: usize, locus: usize) -> Option<(f64, u32)> {
        let (year, member) = self.place[group]?;
        let set = &self.years[year];
        let value = set.rarefied.values[member][locus].filter(|_| set.compares())?;
        Some((value.private_richness, set.rarefied.copies[locus]?))
    }

    /// Whether a group is compared but has no other population compared in its year.
    pub fn alone_in_year(&self, group: usize) -> bool {
        self.place[group].is_some_and(|(year, _)| !self.years[year].compares())
    }

    /// Mean A(g) and π(g) of one group over the loci rarefied, and the smallest g of each.
    pub fn group(&self, group: usize) -> GroupRichness {
        let loci = 0..self.all_groups.copies.len();
        let richness: Vec<(f64, u32)> = loci.clone().filter_map(|l| self.richness_at(group, l)).collect();
        let private: Vec<(f64, u32)> = loci.filter_map(|l| self.private_at(group, l)).collect();
        GroupRichness {
            richness: crate::stats::mean(richness.iter().map(|v| v.0)),
            private_richness: crate::stats::mean(private.iter().map(|v| v.0)),
            smallest_copies: richness.iter().map(|v| v.1).min(),
            smallest_private_copies: private.iter().map(|v| v.1).min(),
        }
    }
}

/// Rarefies every locus over all groups with at least two samples (allelic richness) and over
/// those of each sampling year (private allelic richness).
pub(super) fn rarefy(groups: &[GroupEstimates], requested: Option<u32>) -> Richness {
    let compared: Vec<bool> = groups.iter().map(|g| g.group.samples.len() >= MIN_TYPED_INDIVIDUALS as usize).collect();
    let members: Vec<usize> = (0..groups.len()).filter(|&g| compared[g]).collect();
    let mut by_year: BTreeMap<i32, Vec<usize>> = BTreeMap::new();
    for &g in &members {
        by_year.entry(groups[g].group.year).or_default().push(g);
    }
    let mut place = vec![None; groups.len()];
    let years: Vec<YearSet> = by_year
        .into_iter()
        .enumerate()
        .map(|(index, (year, in_year))| {
            for (member, &g) in in_year.iter().enumerate() {
                place[g] = Some((index, member));
            }
            YearSet { year, rarefied: rarefy_set(groups, in_year, requested) }
        })
        .collect();
    Richness { compared, all_groups: rarefy_set(groups, members, requested), years, place, requested }
}

/// Rarefies every locus over `members`: g = 2 × `requested`, or 2 × the smallest number of
/// typed individuals among the members at that locus. A locus where a member has fewer than
/// two (or fewer than `requested`) typed individuals is dropped for every member.
fn rarefy_set(groups: &[GroupEstimates], members: Vec<usize>, requested: Option<u32>) -> Rarefied {
    let loci = groups.first().map_or(0, |g| g.loci.len());
    let needed = requested.unwrap_or(MIN_TYPED_INDIVIDUALS).max(MIN_TYPED_INDIVIDUALS);
    let mut rarefied = Rarefied {
        copies: vec![None; loci],
        values: vec![vec![None; loci]; members.len()],
        dropped: Vec::new(),
        members,
    };
    if rarefied.members.is_empty() {
        return rarefied;
    }
    let mut slices: Vec<&[u32]> = Vec::with_capacity(rarefied.members.len());
    for locus in 0..loci {
        let typed = |g: usize| groups[g].loci[locus].heterozygosity.typed;
        let short: Vec<(usize, u32)> =
            rarefied.members.iter().filter(|&&g| typed(g) < needed).map(|&g| (g, typed(g))).collect();
        if !short.is_empty() {
            rarefied.dropped.push(DroppedLocus { locus, short });
            continue;
        }
        let individuals = requested.unwrap_or_else(|| rarefied.members.iter().map(|&g| typed(g)).min().unwrap_or(0));
        let copies = 2 * individuals;
        slices.clear();
        slices.extend(rarefied.members.iter().map(|&g| groups[g].loci[locus].allele_copies.as_slice()));
        let Some(values) = rarefy_locus(&slices, copies) else { continue };
        rarefied.copies[locus] = Some(copies);
        for (member, value) in values.into_iter().enumerate() {
            rarefied.values[member][locus] = Some(value);
        }
    }
    rarefied
}
