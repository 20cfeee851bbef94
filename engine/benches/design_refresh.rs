//! `design_refresh`: what the browser does on every edit — synthesis, the 400-point
//! response, noise and a 10,000-build Monte Carlo — for four demo designs (the last with an
//! instrumentation amplifier and its 4,000-build common-mode Monte Carlo), plus the parts
//! on their own so a regression can be traced. Target: ≤ 4 ms median per design on the
//! project's 2-core machine (one 16 ms frame leaves room for rendering).

use criterion::{criterion_group, criterion_main, Criterion};
use rangefit_engine::analysis::{analyse, AnalysisConfig, Nominal};
use rangefit_engine::{demos, design, Request};
use std::hint::black_box;

fn bench(c: &mut Criterion) {
    for id in ["harbour-hydrophone", "boiler-pressure", "mast-tilt", "beehive-scale"] {
        let Some(demo) = demos::find(id) else { continue };
        let Ok(req) = Request::from_json(demo.json) else { continue };
        c.bench_function(&format!("design_refresh/{id}"), |b| b.iter(|| design(black_box(&req))));
        let d = design(&req);
        let (Some(circuit), Some(p)) = (d.circuit.clone(), d.predicted) else { continue };
        let nominal = Nominal { gain: p.gain, f_low_3db: p.band_low, f_high_3db: p.band_high };
        let cfg = AnalysisConfig::from_request(&req);
        c.bench_function(&format!("analyses/{id}"), |b| b.iter(|| analyse(black_box(&req), &circuit, nominal, &cfg)));
        let rails = rangefit_engine::amplifier::Rails::choose(&req);
        let amp = rangefit_engine::amplifier::Amplifier::resolve(&req.amplifier, rails);
        if let Some(t) = d.target {
            c.bench_function(&format!("synthesis/{id}"), |b| {
                b.iter(|| rangefit_engine::synth::synthesize(black_box(&req), &amp, rails, t))
            });
        }
        let no_mc = AnalysisConfig { monte_carlo_runs: 0, ..cfg.clone() };
        c.bench_function(&format!("design_without_monte_carlo/{id}"), |b| {
            b.iter(|| rangefit_engine::design::design_with(black_box(&req), &no_mc))
        });
    }
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = bench
}
criterion_main!(benches);
