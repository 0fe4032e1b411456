#!/usr/bin/env bash
# Runs workflows/Snakefile on copies of the demo case and the two example cases with the local
# executor, checks the case outputs and the portfolio, then changes one case and checks that
# only that case and the portfolio run again.
#
#   bash workflows/test.sh
#
# The popgauge binary: $POPGAUGE if set, otherwise $CARGO_TARGET_DIR/release/popgauge (or
# target/release/popgauge without CARGO_TARGET_DIR), as `cargo test --release --workspace` or
# `cargo build --release --workspace` leaves it. Snakemake is installed from PyPI, at the
# version pinned below, into a virtual environment kept between runs in
# $POPGAUGE_WORKFLOW_VENV (default ~/.cache/popgauge/snakemake-<version>). Needs python3 (3.11
# or newer) with the venv module; everything else goes into a temporary folder that is removed
# afterwards. Set PYTHON to use another interpreter.
set -euo pipefail

SNAKEMAKE_VERSION=9.27.1
repo="$(cd "$(dirname "$0")/.." && pwd)"

fail() {
    printf 'workflows/test.sh: %s\n' "$1" >&2
    [ $# -lt 2 ] || printf '  help: %s\n' "$2" >&2
    exit 1
}

# --- the popgauge binary ---------------------------------------------------------------------
popgauge="${POPGAUGE:-${CARGO_TARGET_DIR:-$repo/target}/release/popgauge}"
[ -x "$popgauge" ] || fail "no popgauge binary at $popgauge" \
    "run \`cargo build --release --workspace\` first, or set POPGAUGE to the binary"
popgauge="$(cd "$(dirname "$popgauge")" && pwd)/$(basename "$popgauge")"

# --- Snakemake in a virtual environment ------------------------------------------------------
python="${PYTHON:-python3}"
"$python" -c 'import sys; sys.exit(sys.version_info < (3, 11))' ||
    fail "$python is older than 3.11; Snakemake $SNAKEMAKE_VERSION needs 3.11 or newer" \
        "set PYTHON to a newer interpreter"
venv="${POPGAUGE_WORKFLOW_VENV:-${XDG_CACHE_HOME:-$HOME/.cache}/popgauge/snakemake-$SNAKEMAKE_VERSION}"
snakemake="$venv/bin/snakemake"
if [ "$("$snakemake" --version 2>/dev/null)" != "$SNAKEMAKE_VERSION" ]; then
    echo "Installing Snakemake $SNAKEMAKE_VERSION into $venv"
    rm -rf "$venv"
    if "$python" -m venv "$venv" >/dev/null 2>&1; then
        pip=("$venv/bin/python" -m pip)
    elif rm -rf "$venv" && "$python" -m venv --without-pip "$venv" && "$python" -m pip --version >/dev/null 2>&1; then
        # A Python without ensurepip (Debian's without python3-venv): its own pip installs
        # into the environment.
        pip=("$python" -m pip --python "$venv/bin/python")
    else
        fail "cannot create a virtual environment with $python" \
            "install the venv module (on Debian and Ubuntu: apt-get install python3-venv)"
    fi
    "${pip[@]}" install --quiet --disable-pip-version-check "snakemake==$SNAKEMAKE_VERSION"
fi
echo "Snakemake $("$snakemake" --version), $("$popgauge" --version)"

# --- copies of the cases, and their configuration ----------------------------------------------
work="$(mktemp -d "${TMPDIR:-/tmp}/popgauge-workflow.XXXXXX")"
trap 'rm -rf "$work"' EXIT
mkdir "$work/cases"
for case in demo-case examples/portfolio/cases/river-mussel examples/portfolio/cases/ground-beetle; do
    cp -R "$repo/$case" "$work/cases/"
done
rm -rf "$work/cases/demo-case/out" # an earlier demo run's output, if any
cat >"$work/config.yaml" <<EOF
popgauge: "$popgauge"
output_root: "$work/out"
threads_per_case: 2
portfolio:
  title: "Workflow test: three simulated cases"
  date: "2026-12-01"
  map: true
cases:
  - path: "$work/cases/demo-case"
    species_group: amphibians
    region: Halvard Uplands
  - path: "$work/cases/river-mussel"
    species_group: molluscs
    region: Quarrendale lowlands
  - path: "$work/cases/ground-beetle"
    species_group: insects
    region: Quarrendale lowlands
EOF
cases=(demo-case river-mussel ground-beetle)

workflow() {
    "$snakemake" all --snakefile "$repo/workflows/Snakefile" --configfile "$work/config.yaml" \
        --directory "$work" --cores 2 "$@"
}

# When each output was last written (nanoseconds), to see which jobs ran.
written() {
    local case
    for case in "${cases[@]}"; do
        printf '%s %s\n' "$case" "$(stat -c %y "$work/out/$case/provenance.json")"
    done
    printf 'portfolio %s\n' "$(stat -c %y "$work/out/portfolio/provenance.json")"
}

# --- first run: everything -------------------------------------------------------------------
echo "Running the workflow on ${#cases[@]} cases"
workflow >"$work/first.log" 2>&1 || { cat "$work/first.log" "$work"/out/logs/*.log >&2 || true; fail "the first run failed"; }
for case in "${cases[@]}"; do
    for file in provenance.json results.json assessment.pdf; do
        [ -s "$work/out/$case/$file" ] || fail "$case: $file was not written"
    done
done
echo "ok: every case output has provenance.json, results.json and assessment.pdf"
for file in portfolio.pdf tables/indicators.csv tables/populations.csv provenance.json figures/map.svg; do
    [ -s "$work/out/portfolio/$file" ] || fail "portfolio: $file was not written"
done
echo "ok: the portfolio has portfolio.pdf, tables/indicators.csv, tables/populations.csv, provenance.json and figures/map.svg (the configuration asks for the map)"
# The manifest's groups and regions reach the indicator table.
for row in "species_group,amphibians," "species_group,molluscs," "species_group,insects," \
    "region,Halvard Uplands," "region,Quarrendale lowlands,"; do
    grep -q "^$row" "$work/out/portfolio/tables/indicators.csv" ||
        fail "portfolio: tables/indicators.csv has no row starting $row (the manifest's groups and regions)"
done
echo "ok: the indicator table has a row for each species group and region of the manifest"

workflow --dry-run >"$work/again.log" 2>&1 || { cat "$work/again.log" >&2; fail "the dry run failed"; }
grep -q "Nothing to be done" "$work/again.log" || { cat "$work/again.log" >&2; fail "a second run would run jobs again"; }
echo "ok: a second run has nothing to do"

# --- one case changes: only it (and the portfolio) runs again ------------------------------------
before="$(written)"
printf '# a comment added to test the workflow\n' >>"$work/cases/river-mussel/case.toml"
workflow --dry-run >"$work/dry.log" 2>&1 || { cat "$work/dry.log" >&2; fail "the dry run failed"; }
awk '/^Job stats:/ { shown = 1 } shown { print } shown && /^total/ { exit }' "$work/dry.log"
workflow >"$work/second.log" 2>&1 || { cat "$work/second.log" >&2; fail "the second run failed"; }
after="$(written)"
changed="$({ diff <(echo "$before") <(echo "$after") || true; } | sed -n 's/^> \([^ ]*\) .*/\1/p' | sort | tr '\n' ' ')"
[ "$changed" = "portfolio river-mussel " ] ||
    fail "after a change to river-mussel/case.toml these outputs were written again: ${changed:-none}; expected: portfolio river-mussel"
echo "ok: after a change to river-mussel/case.toml only river-mussel and the portfolio ran again"
echo "workflows/test.sh: all checks passed"
