"""Reference values for allelic richness and private allelic richness by rarefaction.

Library: scipy (version printed below; 1.17.1 when the test constants were frozen),
scipy.special.comb with exact=True (integer binomial coefficients).
Formulas: Hurlbert (1971), El Mousadik & Petit (1996) for A(g); Kalinowski (2004) for the
private richness (docs/methods.md, "Allelic richness", "Private allelic richness").
Run: python3 tests/reference/rarefaction_reference.py
Frozen in plugins/builtin/src/stats/rarefaction.rs and plugins/builtin/src/steps/diversity.rs.
"""
from fractions import Fraction

import scipy
from scipy.special import comb

print("scipy", scipy.__version__)


def q(total, count, g):
    """Probability that allele with `count` copies is absent from g copies drawn of `total`."""
    return Fraction(int(comb(total - count, g, exact=True)), int(comb(total, g, exact=True)))


def richness(counts, g):
    total = sum(counts)
    return sum(1 - q(total, c, g) for c in counts if c > 0)


counts = [5, 3, 1, 1]
for g in (2, 4, 10):
    print("A(%d) of %s = %.6f" % (g, counts, float(richness(counts, g))))
n = sum(counts)
he = Fraction(n, n - 1) * (1 - sum(Fraction(c, n) ** 2 for c in counts))
print("1 + unbiased He = %.6f" % float(1 + he))

pops = {"pop1": {"a": 6, "b": 4, "c": 2}, "pop2": {"a": 8, "b": 2, "d": 2}}


def private(pops, g, who):
    alleles = sorted({u for p in pops.values() for u in p})
    total = {k: sum(v.values()) for k, v in pops.items()}
    result = Fraction(0)
    for u in alleles:
        p_here = 1 - q(total[who], pops[who].get(u, 0), g)
        absent_elsewhere = Fraction(1)
        for other in pops:
            if other != who:
                absent_elsewhere *= q(total[other], pops[other].get(u, 0), g)
        result += p_here * absent_elsewhere
    return result


for who, counts in pops.items():
    print("%s: AR(8) = %.6f PAR(8) = %.6f" % (who, float(richness(list(counts.values()), 8)), float(private(pops, 8, who))))

# Edge-case data of the diversity step test `rarefaction_and_private_richness_in_step`:
# group P alleles {1:4, 2:4} (4 individuals), group Q {1:6, 3:2} (4 individuals), g = 8.
step = {"P": {"1": 4, "2": 4}, "Q": {"1": 6, "3": 2}}
for who, counts in step.items():
    print("step test %s: AR(8) = %.6f PAR(8) = %.6f" % (who, float(richness(list(counts.values()), 8)), float(private(step, 8, who))))
step6 = {k: v for k, v in step.items()}
for who in step6:
    print("step test g=6 %s: AR(6) = %.6f PAR(6) = %.6f" % (who, float(richness(list(step6[who].values()), 6)), float(private(step6, 6, who))))
