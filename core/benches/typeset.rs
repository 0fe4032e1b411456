//! Time to build the demo's document (data, charts, Typst compile, PDF/A export) from results
//! already computed: `cargo bench -p popgauge --bench typeset`. The steps run once, outside
//! the timing. The target: under 2 s in a release build.

use std::path::Path;

use criterion::{Criterion, criterion_group, criterion_main};
use popgauge::engine::run_steps;
use popgauge::pipeline::{load_case, render_outputs};
use popgauge::progress::Silent;

fn typeset_demo(c: &mut Criterion) {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../demo-case");
    let case = load_case(&demo, false, &mut Silent).expect("the demo case loads");
    let engine = run_steps(&case.recipe, &case.data, &mut Silent).expect("the demo steps run");
    let mut group = c.benchmark_group("report");
    group.sample_size(10);
    group.bench_function("typeset demo document", |b| {
        b.iter(|| {
            let (_, files) = render_outputs(&case, &engine).expect("the demo document typesets");
            std::hint::black_box(files.len())
        })
    });
    group.finish();
}

criterion_group!(benches, typeset_demo);
criterion_main!(benches);
