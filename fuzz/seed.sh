#!/bin/sh
# Seeds the fuzz corpora from the test inputs (run from fuzz/).
set -eu
mkdir -p corpus/wide_table corpus/recipe corpus/plugin_json corpus/vcf corpus/population_sheet corpus/provenance
for f in ../tests/bad-inputs/*/*.csv ../tests/fixtures/*/*.csv ../demo-case/*.csv; do
    [ -f "$f" ] && cp "$f" "corpus/wide_table/$(echo "$f" | tr '/.' '__')"
done
for f in ../tests/bad-inputs/*/case.toml ../tests/fixtures/*/case.toml ../demo-case/case.toml; do
    [ -f "$f" ] && cp "$f" "corpus/recipe/$(echo "$f" | tr '/.' '__')"
done
for f in ../schemas/*.json ../tests/fixtures/*/*.json; do
    [ -f "$f" ] && cp "$f" "corpus/plugin_json/$(echo "$f" | tr '/.' '__')"
done
for f in ../tests/bad-inputs/*/*.vcf ../tests/bad-inputs/*/*.vcf.gz; do
    [ -f "$f" ] && cp "$f" "corpus/vcf/$(echo "$f" | tr '/.' '__')"
done
printf '%s' '{"uses":"ok-name","version":"1","summary":"s"}' > corpus/plugin_json/descriptor
printf '%s' '{"tables":{"t":{"columns":["a","b"],"rows":[[1,"inf"],[null,2.5]]}},"findings":[{"level":"warning","code":"x","message":"m","where":{}}],"citations":["c"]}' > corpus/plugin_json/result
for f in ../tests/bad-inputs/*/populations.csv ../tests/fixtures/*/populations.csv ../demo-case/populations.csv ../demo-colony/populations.csv; do
    [ -f "$f" ] && cp "$f" "corpus/population_sheet/$(echo "$f" | tr '/.' '__')"
done
# A record from a run of the demo, when one was made (`popgauge run demo-case`).
for f in ../demo-case/out/provenance.json ../demo-colony/out/provenance.json; do
    [ -f "$f" ] && cp "$f" "corpus/provenance/$(echo "$f" | tr '/.' '__')"
done
