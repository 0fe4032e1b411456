"""Reference values for the `differentiation` step's multi-locus test.

Generates a small invented data set (three populations, six microsatellite-like loci with 2-5
alleles, about 8 % untyped cells, sampled over two years) and prints:

1. the genotype cells as Rust literals, pasted into
   plugins/builtin/src/steps/differentiation/tests.rs (`reference_matrix`);
2. Weir & Cockerham (1984) theta for each pair of populations and for all three, from
   scikit-allel's `weir_cockerham_fst` (per-allele a, b, c) and `average_weir_cockerham_fst`
   (ratio of sums over alleles and loci);
3. the same within each sampling year (groups = population x year, as with `by_year = true`);
4. the per-locus sums over alleles of a and a + b + c of the global comparison.

Independent library: scikit-allel 1.3.13 with numpy 2.4.6 (Python 3.11.7). Run:

    pip install scikit-allel==1.3.13
    python3 tests/reference/differentiation_scikit_allel.py

The printed values are frozen as constants in the Rust test; they were produced by this script
with the versions above.
"""

import itertools

import allel
import numpy as np

SEED = 20261202
POPULATIONS = [("Ash", 10), ("Birch", 8), ("Cedar", 9)]
YEARS = [2019, 2021]
LOCI = 6
MISSING_SHARE = 0.08


def simulate():
    rng = np.random.default_rng(SEED)
    n_samples = sum(n for _, n in POPULATIONS)
    genotypes = np.full((LOCI, n_samples, 2), -1, dtype=int)
    for locus in range(LOCI):
        alleles = 2 + locus % 4
        start = 0
        for _, n in POPULATIONS:
            frequencies = rng.dirichlet(np.full(alleles, 1.5))
            draws = rng.choice(alleles, size=(n, 2), p=frequencies)
            genotypes[locus, start:start + n, :] = np.sort(draws, axis=1)
            start += n
    missing = rng.random((LOCI, n_samples)) < MISSING_SHARE
    genotypes[missing] = -1
    return genotypes


def subpopulations():
    subpops, start = [], 0
    for _, n in POPULATIONS:
        subpops.append(list(range(start, start + n)))
        start += n
    return subpops


def label(allele):
    # Microsatellite-like labels: 100, 104, 108, ...
    return str(100 + 4 * allele)


def print_rust_cells(genotypes):
    print("// (sample, population, year, cells)")
    index = 0
    for pop, n in POPULATIONS:
        for i in range(n):
            year = YEARS[i % 2]
            cells = []
            for locus in range(LOCI):
                a, b = genotypes[locus, index]
                cells.append("./." if a < 0 else f"{label(a)}/{label(b)}")
            joined = ", ".join(f'"{c}"' for c in cells)
            print(f'("{pop}{i + 1}", "{pop}", {year}, [{joined}]),')
            index += 1


def year_theta(genotypes, subpops):
    # A locus untyped in a whole group gives NaN components, which nansum leaves out: the same
    # rule as the step's (such a locus is dropped from that comparison).
    with np.errstate(invalid="ignore", divide="ignore"):
        fst, _, _, _ = allel.average_weir_cockerham_fst(genotypes, subpops, blen=1)
    return fst


def main():
    genotypes = simulate()
    subpops = subpopulations()
    # No locus may be untyped in a whole population (that case is tested separately).
    for locus in range(LOCI):
        for s in subpops:
            assert (genotypes[locus, s, 0] >= 0).any()
    print(f"scikit-allel {allel.__version__}, numpy {np.__version__}")
    print_rust_cells(genotypes)
    names = [p for p, _ in POPULATIONS]
    for (i, a), (j, b) in itertools.combinations(enumerate(names), 2):
        fst, _, _, _ = allel.average_weir_cockerham_fst(genotypes, [subpops[i], subpops[j]], blen=1)
        print(f"pair {a}-{b}: theta = {fst:.12f}")
    fst, _, _, _ = allel.average_weir_cockerham_fst(genotypes, subpops, blen=1)
    print(f"global: theta = {fst:.12f}")
    for year_index, year in enumerate(YEARS):
        in_year = [[i for i in s if (i - s[0]) % 2 == year_index] for s in subpops]
        for (i, a), (j, b) in itertools.combinations(enumerate(names), 2):
            fst = year_theta(genotypes, [in_year[i], in_year[j]])
            print(f"{year} pair {a}-{b}: theta = {fst:.12f}")
        print(f"{year} global: theta = {year_theta(genotypes, in_year):.12f}")
    a, b, c = allel.weir_cockerham_fst(genotypes, subpops)
    numerator = np.nansum(a, axis=1)
    denominator = np.nansum(a + b + c, axis=1)
    for locus in range(LOCI):
        print(f"locus {locus + 1}: sum a = {numerator[locus]:.12f}, sum a+b+c = {denominator[locus]:.12f}")


if __name__ == "__main__":
    main()
