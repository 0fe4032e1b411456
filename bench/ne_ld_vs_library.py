#!/usr/bin/env python3
"""popgauge's whole `ne-ld` run beside a general library's all-pairs r² alone, on the same data.

Not part of the test suite or CI: a manual benchmark whose figures go into the README's
Performance section (with the processor model and the load average, which it prints).

What is compared:
- popgauge: `popgauge run` on a case with one step, `ne-ld` at its defaults (three Pcrit values
  and "no singletons" in one pass, the jackknife over loci, the jackknife over individuals on a
  subset of loci, the estimates and intervals), on one group of samples. Its time is the step's
  time from provenance.json, plus the whole command's wall time.
- the library: scikit-allel's `rogers_huff_r` (all pairs of loci, r from genotype dosages) on the
  same genotypes, timed alone (reading the VCF and building the dosage array not counted). It
  does one r² per pair and no estimate, so it is a floor for the pair loop, not the same work.

Data: the first SNPS records of the scale case's `calls.vcf` (written by
`cargo run --release -p popgauge-sim --bin scale-bench -- --out DIR`) and the samples of one
population and year (100 samples in that case).

Setup (scikit-allel and numpy from PyPI, in a virtual environment):
    python3 -m venv /tmp/pg-bench-venv
    /tmp/pg-bench-venv/bin/pip install numpy scikit-allel
    /tmp/pg-bench-venv/bin/python bench/ne_ld_vs_library.py --case DIR/case --popgauge target/release/popgauge

Without scikit-allel the script still times popgauge and says that the library is missing.
"""

import argparse
import csv
import datetime
import json
import os
import platform
import shutil
import subprocess
import sys
import tempfile
import time


def cpu_model():
    try:
        with open("/proc/cpuinfo") as f:
            for line in f:
                if line.startswith("model name"):
                    return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown processor"


def load_average():
    try:
        return "load average %.2f %.2f %.2f" % os.getloadavg()
    except OSError:
        return "load average unknown"


def group_samples(sheet, population, year):
    with open(sheet, newline="") as f:
        rows = list(csv.DictReader(f))
    if population is None:
        population, year = rows[0]["population"], rows[0]["year"]
    chosen = [r for r in rows if r["population"] == population and r["year"] == str(year)]
    return population, str(year), chosen


def subset_vcf(vcf, out, snps):
    """The header and the first `snps` records of a plain VCF file."""
    kept = 0
    with open(vcf) as source, open(out, "w") as target:
        for line in source:
            if line.startswith("#"):
                target.write(line)
                continue
            if kept == snps:
                break
            target.write(line)
            kept += 1
    return kept


RECIPE = """[assessment]
title = "ne-ld benchmark (simulated data)"
species = "simulated"
assessor = "benchmark"
organisation = "benchmark"
date = "2026-11-30"
generation_time_years = 2.0
seed = 1

[data]
vcf = "calls.vcf"
samples = "samples.csv"

[[step]]
id = "ne-ld"
uses = "ne-ld"
"""


def write_case(args, folder):
    population, year, chosen = group_samples(os.path.join(args.case, "samples.csv"), args.population, args.year)
    with open(os.path.join(folder, "samples.csv"), "w", newline="") as f:
        writer = csv.DictWriter(f, fieldnames=["sample", "population", "year"], lineterminator="\n")
        writer.writeheader()
        for row in chosen:
            writer.writerow({k: row[k] for k in ("sample", "population", "year")})
    snps = subset_vcf(os.path.join(args.case, "calls.vcf"), os.path.join(folder, "calls.vcf"), args.snps)
    with open(os.path.join(folder, "case.toml"), "w") as f:
        f.write(RECIPE)
    return population, year, [r["sample"] for r in chosen], snps


def instant(text):
    return datetime.datetime.fromisoformat(text.replace("Z", "+00:00"))


def time_popgauge(popgauge, folder):
    out = os.path.join(folder, "out")
    start = time.perf_counter()
    subprocess.run([popgauge, "run", folder, "--out", out, "--force", "--quiet"], check=True, stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - start
    with open(os.path.join(out, "provenance.json")) as f:
        record = json.load(f)
    step = next(s for s in record["steps"] if s["uses"] == "ne-ld")
    step_seconds = (instant(step["ended"]) - instant(step["started"])).total_seconds()
    return wall, step_seconds


def dosages(vcf, samples):
    """Alternative-allele dosage per SNP and sample (-1 untyped), as int8."""
    import numpy as np

    rows = []
    columns = None
    with open(vcf) as f:
        for line in f:
            if line.startswith("##"):
                continue
            fields = line.rstrip("\n").split("\t")
            if fields[0] == "#CHROM":
                index = {name: i for i, name in enumerate(fields)}
                columns = [index[s] for s in samples]
                continue
            row = []
            for c in columns:
                gt = fields[c].split(":", 1)[0].replace("|", "/")
                if "." in gt:
                    row.append(-1)
                else:
                    row.append(sum(int(a) > 0 for a in gt.split("/")))
            rows.append(row)
    return np.array(rows, dtype="i1")


def time_library(vcf, samples):
    try:
        import allel
        import numpy as np
    except ImportError as error:
        return None, "scikit-allel or numpy is not installed (%s); see the setup in this script's header" % error
    gn = dosages(vcf, samples)
    start = time.perf_counter()
    r = allel.rogers_huff_r(gn)
    r2 = np.square(r)
    seconds = time.perf_counter() - start
    return seconds, "scikit-allel %s, numpy %s: %d pairs" % (allel.__version__, np.__version__, len(r2))


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--case", required=True, help="the scale case folder (with calls.vcf and samples.csv)")
    parser.add_argument("--popgauge", default="target/release/popgauge", help="the popgauge binary")
    parser.add_argument("--snps", type=int, default=5000, help="first SNPs of the VCF file to use (default 5000)")
    parser.add_argument("--population", help="population of the group (default: the first sample's)")
    parser.add_argument("--year", help="sampling year of the group")
    args = parser.parse_args()
    folder = tempfile.mkdtemp(prefix="pg-ne-ld-bench-")
    try:
        population, year, samples, snps = write_case(args, folder)
        pairs = snps * (snps - 1) // 2
        print("%s; %d cores; %s" % (cpu_model(), os.cpu_count(), load_average()))
        print("data: %d SNPs x %d samples (%s %s), %d pairs" % (snps, len(samples), population, year, pairs))
        wall, step = time_popgauge(args.popgauge, folder)
        print("popgauge ne-ld (defaults, whole step): %.2f s (step time from provenance.json); whole command %.2f s wall;"
              " %.3e pair-samples/s" % (step, wall, pairs * len(samples) / step))
        seconds, note = time_library(os.path.join(folder, "calls.vcf"), samples)
        if seconds is None:
            print("library: not run: " + note)
        else:
            print("library all-pairs r^2 alone: %.2f s (%s); %.3e pair-samples/s; popgauge step / library = %.2f"
                  % (seconds, note, pairs * len(samples) / seconds, step / seconds))
        print("after: " + load_average())
    finally:
        shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
