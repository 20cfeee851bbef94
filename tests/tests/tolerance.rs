//! Tolerance analysis (worst case and Monte Carlo) and its fast DC kernel, checked against
//! outside references: the general MNA solver (nalgebra LU) on perturbed copies of the
//! circuit, brute-force enumeration of every vertex of the tolerance box with that solver,
//! Cramer's rule, hand formulas and sampling statistics. The source is named beside each
//! check. Request data are scenarios of our own.

use rangefit_engine::amplifier::{Amplifier, Rails};
use rangefit_engine::analysis::perturb::{solve_dense, Kernel, ParamKind};
use rangefit_engine::analysis::tolerance::{tolerance, ToleranceAnalysis, ToleranceConfig, MAX_BINS};
use rangefit_engine::circuit::{Builder, Circuit, PartKind, StageRole};
use rangefit_engine::request::{AmplifierSpec, Coupling, Request};
use rangefit_engine::solve::{Solver, GM, GMIN};
use rangefit_engine::{demos, design};
use rangefit_tests::rows::{at_least, at_most, check, row as near};

// ---------------------------------------------------------------------------------------
// Scenarios of our own.

/// A cold-store temperature transmitter (0.1–0.9 V) into a 3.3 V converter on one rail.
const COLD_STORE: &str = r#"{"name": "Cold-store temperature transmitter",
  "source": {"min": "0.1 V", "max": "0.9 V", "impedance": "200", "band_high": "5 Hz"},
  "destination": {"min": 0, "max": "3.3 V", "bits": 12, "sample_rate": "100 Hz", "impedance": "100k"},
  "supplies": [3.3]}"#;

/// A tide-gauge pressure cell (12–62 mV) into a 2.5 V converter, 5 V rail, E24 1 %.
const TIDE_GAUGE: &str = r#"{"name": "Tide-gauge pressure cell",
  "source": {"min": "12 mV", "max": "62 mV", "impedance": "350", "band_high": "2 Hz"},
  "destination": {"min": 0, "max": "2.5 V", "bits": 16, "sample_rate": "50 Hz", "impedance": "1M",
    "reference_tolerance": 0},
  "supplies": [5], "supply_tolerance": 0,
  "parts": {"resistor_series": "E24", "resistor_tolerance": "1 %"}}"#;

/// A soil-moisture probe (−1…+1 V) into 0–4 V on ±12 V, polarity free.
const SOIL_PROBE: &str = r#"{"name": "Greenhouse soil-moisture probe",
  "source": {"min": "-1 V", "max": "1 V", "impedance": "1k", "band_high": "1 Hz"},
  "destination": {"min": 0, "max": "4 V", "bits": 14, "sample_rate": "20 Hz"},
  "supplies": [12, -12], "keep_polarity": false}"#;

/// An AC-coupled conveyor-bearing vibration pickup riding on 2 V.
const BEARING: &str = r#"{"name": "Conveyor-bearing vibration pickup",
  "source": {"min": "1.9 V", "max": "2.1 V", "coupling": "ac", "impedance": "2k", "band_low": "10 Hz",
  "band_high": "2 kHz"},
  "destination": {"min": 0, "max": "3.3 V", "bits": 12, "sample_rate": "10 kHz", "impedance": "20k"},
  "supplies": [5]}"#;

/// Request from JSON with extra fields merged in (objects key by key, at every depth).
fn request(json: &str, extra: &str) -> Request {
    fn merge(v: &mut serde_json::Value, e: &serde_json::Value) {
        match (v.as_object_mut(), e.as_object()) {
            (Some(into), Some(from)) => {
                for (k, x) in from {
                    merge(into.entry(k.clone()).or_insert(serde_json::Value::Null), x);
                }
            }
            _ => *v = e.clone(),
        }
    }
    let mut v: serde_json::Value = serde_json::from_str(json).expect("scenario JSON");
    if !extra.is_empty() {
        merge(&mut v, &serde_json::from_str(extra).expect("extra JSON"));
    }
    Request::from_value(&v).expect("scenario request")
}

/// Zero tolerance everywhere: parts, the amplifier's offset and bias currents, the rails, the
/// converter's reference.
const ZERO_TOL: &str = r#"{"parts": {"resistor_tolerance": 0, "capacitor_tolerance": 0},
    "amplifier": {"offset": 0, "bias_current": 0}, "supply_tolerance": 0,
    "destination": {"reference_tolerance": 0}}"#;

fn designed(req: &Request) -> (Circuit, rangefit_engine::design::Predicted) {
    let d = design(req);
    let c = d.circuit.unwrap_or_else(|| panic!("{} did not synthesise: {:?}", req.name, d.checks));
    (c, d.predicted.expect("prediction"))
}

/// Every demo and scenario, as (label, request).
fn all_requests() -> Vec<(String, Request)> {
    let mut v: Vec<(String, Request)> =
        demos::ALL.iter().map(|d| (d.id.to_string(), Request::from_json(d.json).unwrap())).collect();
    for (name, json) in
        [("cold-store", COLD_STORE), ("tide-gauge", TIDE_GAUGE), ("soil-probe", SOIL_PROBE), ("bearing", BEARING)]
    {
        v.push((name.to_string(), request(json, "")));
    }
    v
}

fn cfg(runs: usize, seed: u64) -> ToleranceConfig {
    ToleranceConfig { runs, seed, bins: 40 }
}

/// A small deterministic generator for test data (splitmix64).
struct Mix(u64);
impl Mix {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Uniform in [−1, 1).
    fn sym(&mut self) -> f64 {
        2.0 * self.next() - 1.0
    }
}

// ---------------------------------------------------------------------------------------
// Reference: the general solver on a perturbed copy of the circuit.

/// The circuit with build `p` applied for the general solver: part values scaled. The
/// amplifier's offset and bias currents, which the general solver does not model, come back
/// as current injections for superposition: `(unknown, current into it)`. Bias current into
/// a pin is −I injected at its node; an offset Vos in series with the + input adds GM·Vos to
/// the current the input stage drives into the internal node `U1:x`.
fn perturbed(c: &Circuit, k: &Kernel, p: &[f64]) -> (Circuit, Vec<(String, f64)>) {
    let mut c = c.clone();
    let mut inject = Vec::new();
    for (prm, &x) in k.params().iter().zip(p) {
        let part = c.part_mut(&prm.part).unwrap();
        match prm.kind {
            ParamKind::Resistor | ParamKind::Capacitor => part.value *= 1.0 + x,
            ParamKind::Offset => inject.push((format!("{}:x", prm.part), GM * x)),
            ParamKind::BiasPlus => inject.push((part.nodes[0].clone(), -x)),
            ParamKind::BiasMinus => inject.push((part.nodes[1].clone(), -x)),
        }
    }
    (c, inject)
}

/// Output at `adc` for the perturbed circuit at DC: the general solver plus the injected
/// currents by superposition through its adjoint transfers at 0 Hz.
fn reference_dc(c: &Circuit, inject: &[(String, f64)], source: f64) -> f64 {
    let s = Solver::new(c);
    let y = s.dc(source).unwrap().voltage("adc").unwrap();
    if inject.iter().all(|b| b.1 == 0.0) {
        return y;
    }
    let z = s.injection_transfers(0.0, "adc").unwrap();
    y + inject.iter().filter_map(|(n, i)| s.index_of(n).map(|k| z[k].re * i)).sum::<f64>()
}

/// `[output at min, output at max, gain, offset]` of build `p` by the general solver, with
/// the meaning of `design::predict` (AC: full complex mid-band gain, no short approximation).
fn reference_quantities(req: &Request, c: &Circuit, k: &Kernel, p: &[f64]) -> [f64; 4] {
    let (pc, bias) = perturbed(c, k, p);
    let s = &req.source;
    let rails = Rails { pos: c.rail_pos, neg: c.rail_neg };
    let (lo, hi) = c.amplifier.output_limits(rails);
    let clamp = |y: f64| y.max(lo).min(hi);
    match s.coupling {
        Coupling::Dc => {
            let y1 = clamp(reference_dc(&pc, &bias, s.min));
            let y2 = clamp(reference_dc(&pc, &bias, s.max));
            let g = (y2 - y1) / (s.max - s.min);
            [y1, y2, g, y1 - g * s.min]
        }
        Coupling::Ac => {
            let mid = 0.5 * (s.min + s.max);
            let level = reference_dc(&pc, &bias, mid);
            let h = Solver::new(&pc).transfer((s.band_low * s.band_high).sqrt(), "adc").unwrap();
            let g = if h.re >= 0.0 { h.norm() } else { -h.norm() };
            [clamp(level + g * (s.min - mid)), clamp(level + g * (s.max - mid)), g, clamp(level)]
        }
    }
}

/// A copy with every coupling, gain and reference capacitor replaced by a short: its nodes
/// merged (into ground when one of them is ground) and the capacitor removed. Filter and
/// drive capacitors, whose corners lie above the band, are left open (removed), as the
/// kernel's mid-band system has them.
fn shorted(c: &Circuit) -> Circuit {
    let mut c = c.clone();
    // Supply decoupling joins a rail to ground, both fixed: it carries nothing, so it goes.
    c.parts.retain(|q| !rangefit_engine::circuit::open_at_mid_band(q) && !rangefit_engine::circuit::is_decoupling(q));
    while let Some(i) = c.parts.iter().position(|q| q.kind == PartKind::Capacitor) {
        let cap = c.parts.remove(i);
        let (keep, gone) = if cap.nodes[1] == "0" {
            (cap.nodes[1].clone(), cap.nodes[0].clone())
        } else {
            (cap.nodes[0].clone(), cap.nodes[1].clone())
        };
        for q in c.parts.iter_mut() {
            for n in q.nodes.iter_mut().filter(|n| **n == gone) {
                *n = keep.clone();
            }
        }
    }
    c
}

const Q: [&str; 4] = ["output_at_min", "output_at_max", "gain", "offset"];

fn wc_of(t: &ToleranceAnalysis) -> [[f64; 2]; 4] {
    let w = &t.worst_case;
    [w.output_at_min, w.output_at_max, w.gain, w.offset]
}

fn mc_of(t: &ToleranceAnalysis) -> [&rangefit_engine::analysis::tolerance::Stats; 4] {
    let m = &t.monte_carlo;
    [&m.output_at_min, &m.output_at_max, &m.gain, &m.offset]
}

// ---------------------------------------------------------------------------------------
// The kernel.

#[test]
fn dense_solve_matches_cramers_rule_and_residual() {
    // Source: Cramer's rule x_i = det(A_i)/det(A) with determinants by Laplace expansion
    // (naive reference), and the residual |A·x − b| of the returned solution.
    fn det(m: &[f64], n: usize) -> f64 {
        if n == 1 {
            return m[0];
        }
        (0..n)
            .map(|j| {
                let minor: Vec<f64> = (1..n)
                    .flat_map(|i| (0..n).filter(move |&c| c != j).map(move |c| (i, c)))
                    .map(|(i, c)| m[i * n + c])
                    .collect();
                let sign = if j % 2 == 0 { 1.0 } else { -1.0 };
                sign * m[j] * det(&minor, n - 1)
            })
            .sum()
    }
    let mut rng = Mix(20_240_611);
    let mut checks = Vec::new();
    for trial in 0..60 {
        let n = 1 + trial % 6;
        // Scaled like MNA: entries over nine decades, some zero, small diagonals possible.
        let a: Vec<f64> = (0..n * n)
            .map(|_| if rng.next() < 0.25 { 0.0 } else { rng.sym() * 10f64.powf(-6.0 + 9.0 * rng.next()) })
            .collect();
        let b: Vec<f64> = (0..n).map(|_| rng.sym()).collect();
        let d = det(&a, n);
        let scale: f64 = a.iter().map(|v| v.abs()).fold(0.0, f64::max);
        if d.abs() <= 1e-12 * scale.powi(n as i32) {
            continue;
        }
        let (mut lu, mut x) = (a.clone(), b.clone());
        assert!(solve_dense(&mut lu, n, &mut x), "trial {trial}: reported singular");
        for i in 0..n {
            let mut ai = a.clone();
            for r in 0..n {
                ai[r * n + i] = b[r];
            }
            let xi = det(&ai, n) / d;
            checks.push(near(
                format!("trial {trial} x[{i}] vs Cramer"),
                x[i],
                xi,
                1e-8 * xi.abs().max(1e-3),
                "Cramer's rule",
            ));
            let res: f64 = (0..n).map(|c| a[i * n + c] * x[c]).sum::<f64>() - b[i];
            let row: f64 = (0..n).map(|c| (a[i * n + c] * x[c]).abs()).sum::<f64>() + b[i].abs();
            checks.push(near(format!("trial {trial} residual row {i}"), res, 0.0, 1e-12 * row, "residual of A·x = b"));
        }
    }
    check(&checks);
}

#[test]
fn kernel_agrees_with_general_solver() {
    // Source: the general MNA solver (nalgebra LU on the unreduced system) on the same
    // circuit with the same build applied; relative 1e-9.
    let mut checks = Vec::new();
    let mut rng = Mix(7);
    for (label, req) in all_requests() {
        let (c, _) = designed(&req);
        let k = Kernel::compile(&c, "adc").unwrap();
        let n = k.params().len();
        let mut ws = k.workspace();
        for build in 0..12 {
            // Build 0 is nominal; the others move every part by up to ±5 % and the amplifier's
            // offset and bias currents by up to twice their figures.
            let p: Vec<f64> = k
                .params()
                .iter()
                .map(|prm| {
                    if build == 0 {
                        0.0
                    } else {
                        match prm.kind {
                            ParamKind::Resistor | ParamKind::Capacitor => 0.05 * rng.sym(),
                            _ => 2.0 * prm.bound * rng.sym(),
                        }
                    }
                })
                .collect();
            let (pc, bias) = perturbed(&c, &k, &p);
            let (slope, icpt) = k.dc_line(&p, &mut ws).unwrap();
            for x in [req.source.min, 0.5 * (req.source.min + req.source.max), req.source.max] {
                let sol = Solver::new(&pc).dc(x).unwrap();
                if !sol.clamped.is_empty() {
                    continue;
                }
                let want = reference_dc(&pc, &bias, x);
                let got = slope * x + icpt;
                checks.push(near(
                    format!("{label} build {build} adc at {x} V"),
                    got,
                    want,
                    1e-9 * want.abs().max(1e-3),
                    "general solver, same build",
                ));
                // Every node voltage, offset and bias currents off (the general solver has neither).
                if build % 3 == 0 {
                    let q: Vec<f64> = k
                        .params()
                        .iter()
                        .zip(&p)
                        .map(
                            |(prm, &v)| {
                                if matches!(prm.kind, ParamKind::Resistor | ParamKind::Capacitor) {
                                    v
                                } else {
                                    0.0
                                }
                            },
                        )
                        .collect();
                    let (pc0, _) = perturbed(&c, &k, &q);
                    let sol0 = Solver::new(&pc0).dc(x).unwrap();
                    for (node, v) in k.dc_voltages(&q, x).unwrap() {
                        let want = sol0.voltage(&node).unwrap();
                        checks.push(near(
                            format!("{label} build {build} node {node} at {x} V"),
                            v,
                            want,
                            1e-9 * want.abs().max(1e-3),
                            "general solver, same build",
                        ));
                    }
                }
            }
            // Mid-band gain with capacitors shorted: the general solver at 0 Hz on a copy in
            // which each capacitor's two nodes are made one node.
            let want = Solver::new(&shorted(&pc)).transfer(0.0, "adc").unwrap().re;
            let got = k.short_gain(&p, &mut ws).unwrap();
            checks.push(near(
                format!("{label} build {build} short-capacitor gain"),
                got,
                want,
                1e-9 * want.abs().max(1e-3),
                "general solver, capacitors as shorts",
            ));
        }
        assert!(n > 0, "{label}: no parameters");
    }
    check(&checks);
}

#[test]
fn kernel_agrees_on_seeded_random_circuits() {
    // Source: the general MNA solver on random single-amplifier resistor networks (rails set
    // far out so no output limit applies); relative 1e-9.
    let spec = AmplifierSpec {
        open_loop_gain: Some(2e5),
        offset: Some(2e-3),
        bias_current: Some(5e-9),
        ..AmplifierSpec::default()
    };
    let mut a = Amplifier::resolve(&spec, Rails { pos: 15.0, neg: -15.0 });
    a.swing_low = -1e6;
    a.swing_high = -1e6;
    let mut rng = Mix(99);
    let mut checks = Vec::new();
    let inner = ["n1", "n2", "n3", "n4", "adc"];
    let anchors = ["sense", "vpos", "vneg", "0"];
    let mut compared = 0;
    for trial in 0..100 {
        let mut b = Builder::default();
        b.bench("VSENSE", PartKind::VoltageSource, 0.0, &["emf", "0"], StageRole::Sensor, "");
        b.bench(
            "RSENSE",
            PartKind::Resistor,
            10f64.powf(-3.0 + 6.0 * rng.next()),
            &["emf", "sense"],
            StageRole::Sensor,
            "",
        );
        b.bench("VPOS", PartKind::VoltageSource, 15.0, &["vpos", "0"], StageRole::Supply, "");
        b.bench("VNEG", PartKind::VoltageSource, -15.0, &["vneg", "0"], StageRole::Supply, "");
        b.bench("RADC", PartKind::Resistor, 1e4, &["adc", "0"], StageRole::Converter, "");
        // A chain ties every inner node to the anchors; extra resistors join random pairs.
        let all: Vec<&str> = inner.iter().chain(anchors.iter()).copied().collect();
        for (i, node) in inner.iter().enumerate() {
            let to =
                if i == 0 { anchors[(rng.next() * 4.0) as usize] } else { inner[(rng.next() * i as f64) as usize] };
            b.add(PartKind::Resistor, 10f64.powf(3.0 + 3.0 * rng.next()), Some(0.01), &[node, to], StageRole::Gain, "");
        }
        for _ in 0..3 {
            let (x, y) = (all[(rng.next() * all.len() as f64) as usize], all[(rng.next() * all.len() as f64) as usize]);
            if x != y {
                b.add(PartKind::Resistor, 10f64.powf(3.0 + 3.0 * rng.next()), Some(0.01), &[x, y], StageRole::Gain, "");
            }
        }
        // Feedback from the output to the − input keeps most networks well conditioned.
        let inn = inner[(rng.next() * 4.0) as usize];
        let inp = ["n1", "n2", "n3", "n4", "sense", "0"][(rng.next() * 6.0) as usize];
        b.add(PartKind::Resistor, 10f64.powf(3.0 + 3.0 * rng.next()), Some(0.01), &["adc", inn], StageRole::Gain, "");
        b.add(PartKind::OpAmp, 1e6, None, &[inp, inn, "vpos", "vneg", "adc"], StageRole::Gain, "");
        let c = Circuit { parts: b.parts, stages: vec![], amplifier: a.clone(), rail_pos: 15.0, rail_neg: -15.0 };
        let k = Kernel::compile(&c, "adc").unwrap();
        // A build inside the tolerances, and one with resistors anywhere from 0.1× to 1.9×
        // nominal, far enough for some pivots to shrink below the kernel's reuse limit.
        for (label, spread) in [("1 %", 1.0), ("±90 %", 90.0)] {
            let p: Vec<f64> = k
                .params()
                .iter()
                .map(|prm| (if prm.kind == ParamKind::Resistor { spread } else { 1.0 }) * prm.bound * rng.sym())
                .collect();
            let (pc, bias) = perturbed(&c, &k, &p);
            let (slope, icpt) = k.dc_line(&p, &mut k.workspace()).unwrap();
            let want: Vec<f64> = [-1.0, 0.3, 2.0].iter().map(|&x| reference_dc(&pc, &bias, x)).collect();
            // A linear answer beyond the rails is an unstable equilibrium of a positive-feedback
            // network, ill-conditioned by its loop gain and never reached by a real amplifier.
            if want.iter().any(|y| y.abs() > 15.0) {
                continue;
            }
            compared += 1;
            for (x, want) in [-1.0, 0.3, 2.0].into_iter().zip(want) {
                checks.push(near(
                    format!("random circuit {trial} ({label}) at {x} V"),
                    slope * x + icpt,
                    want,
                    1e-9 * want.abs().max(1e-3),
                    "general solver, same build",
                ));
            }
        }
    }
    checks.push(at_least(
        "random builds compared",
        compared as f64,
        100.0,
        0.0,
        "at least half the random builds have an operating point inside the rails",
    ));
    check(&checks);
}

// ---------------------------------------------------------------------------------------
// Worst case.

#[test]
fn worst_case_matches_brute_force_vertex_enumeration() {
    // Source: every vertex of the tolerance box solved by the general solver (offset as a
    // series source, bias currents by superposition); DC designs to 1e-9 of the converter
    // span, AC designs to 1e-6 (the analysis treats capacitors as shorts mid-band).
    let mut checks = Vec::new();
    // The filter multiplies the parameters (every section's resistors and its amplifier's
    // offset and bias currents): the requests are designed without it here, plus one with a
    // second-order filter so that a chain of two amplifiers is enumerated too.
    let mut requests: Vec<(String, Request)> = all_requests()
        .into_iter()
        .map(|(label, mut r)| {
            r.filter.response = rangefit_engine::request::ResponseKind::None;
            // An instrumentation amplifier's three amplifiers and nine resistors would take
            // 2^24 vertices; its bridge is enumerated behind the difference amplifier here.
            r.source.front_end = rangefit_engine::request::FrontEnd::Difference;
            // The enumeration covers the kernel's parameters; the rails' share is checked
            // against ngspice in tests/bench_truth.rs, so they are held exact here.
            r.supply_tolerance = vec![0.0];
            r.destination.reference_tolerance = 0.0;
            (label, r)
        })
        .collect();
    requests.push((
        "cold-store, order-2 filter".to_string(),
        request(
            COLD_STORE,
            r#"{"filter": {"order": 2, "out_of_band_level": "-60 dB"}, "supply_tolerance": 0,
            "destination": {"reference_tolerance": 0}}"#,
        ),
    ));
    for (label, req) in requests {
        let (c, _) = designed(&req);
        let k = Kernel::compile(&c, "adc").unwrap();
        // Capacitors do not move any quantity (open at DC, shorts mid-band): hold them nominal
        // to keep the enumeration small.
        let vary: Vec<usize> =
            k.params().iter().enumerate().filter(|(_, p)| p.kind != ParamKind::Capacitor).map(|(i, _)| i).collect();
        assert!(vary.len() <= 16, "{label}: {} parameters", vary.len());
        let mut ext = [[f64::INFINITY, f64::NEG_INFINITY]; 4];
        for mask in 0..(1u32 << vary.len()) {
            let mut p = vec![0.0; k.params().len()];
            for (bit, &i) in vary.iter().enumerate() {
                let b = k.params()[i].bound;
                p[i] = if mask >> bit & 1 == 1 { b } else { -b };
            }
            let q = reference_quantities(&req, &c, &k, &p);
            for j in 0..4 {
                ext[j][0] = ext[j][0].min(q[j]);
                ext[j][1] = ext[j][1].max(q[j]);
            }
        }
        let t = tolerance(&req, &c, &cfg(0, 1));
        let wc = wc_of(&t);
        let span = req.destination.max - req.destination.min;
        let tol = if req.source.coupling == Coupling::Ac { 1e-6 } else { 1e-9 };
        for j in 0..4 {
            let scale = if j == 2 { ext[2][1].abs().max(1e-3) } else { span };
            for e in 0..2 {
                checks.push(near(
                    format!("{label} {} {}", Q[j], ["low", "high"][e]),
                    wc[j][e],
                    ext[j][e],
                    tol * scale,
                    "brute-force vertex enumeration, general solver",
                ));
            }
        }
    }
    check(&checks);
}

/// A plain non-inverting stage built by hand: gain 1 + Rf/Rg, + input on the sensor.
fn plain_stage(rf: f64, rg: f64, tol_f: f64, tol_g: f64, offset: f64) -> Circuit {
    let spec = AmplifierSpec {
        open_loop_gain: Some(1e12),
        offset: Some(offset),
        bias_current: Some(0.0),
        ..AmplifierSpec::default()
    };
    let a = Amplifier::resolve(&spec, Rails { pos: 5.0, neg: 0.0 });
    let mut b = Builder::default();
    b.bench("VSENSE", PartKind::VoltageSource, 0.0, &["emf", "0"], StageRole::Sensor, "");
    b.bench("RSENSE", PartKind::Resistor, 350.0, &["emf", "sense"], StageRole::Sensor, "");
    b.bench("VPOS", PartKind::VoltageSource, 5.0, &["vpos", "0"], StageRole::Supply, "");
    b.bench("RADC", PartKind::Resistor, 1e6, &["adc", "0"], StageRole::Converter, "");
    b.add(PartKind::Resistor, rg, Some(tol_g), &["inn1", "0"], StageRole::Gain, "");
    b.add(PartKind::Resistor, rf, Some(tol_f), &["adc", "inn1"], StageRole::Gain, "");
    b.add(PartKind::OpAmp, 1e6, None, &["sense", "inn1", "vpos", "0", "adc"], StageRole::Gain, "");
    Circuit { parts: b.parts, stages: vec![], amplifier: a, rail_pos: 5.0, rail_neg: 0.0 }
}

#[test]
fn worst_case_gain_of_plain_stage_matches_hand_bound() {
    // Source: the non-inverting gain formula G = 1 + Rf/Rg; its extremes over ±t are
    // 1 + Rf(1∓t)/(Rg(1±t)), reduced by the finite loop gain as G/(1 + G/A). An input offset Vos
    // reaches the output as G·Vos (the offset sits in series with the + input), so the intercept spans ±G_max·Vos.
    let req = request(TIDE_GAUGE, "");
    let mut checks = Vec::new();
    for (rf, rg, t, vos) in
        [(39.2e3, 1e3, 0.01, 0.0), (39.2e3, 1e3, 0.01, 1e-3), (12.1e3, 2.49e3, 0.005, 0.5e-3), (100e3, 10e3, 0.05, 0.0)]
    {
        let c = plain_stage(rf, rg, t, t, vos);
        let wc = tolerance(&req, &c, &cfg(0, 1)).worst_case;
        // The macro-model's loop gain: A = GM·R_x with R_x the internal node's load, 1e12/GM
        // in parallel with 1/GMIN; closed-loop gain G/(1 + G/A) (finite-gain feedback
        // formula). The solver's GMIN (1e-12 S from every node to ground) sits across Rg and
        // forms a divider with the sensor's 350 Ω.
        let a = GM / (GM / 1e12 + GMIN);
        let divider = 1.0 / (1.0 + 350.0 * GMIN);
        let g = |rf: f64, rg: f64| {
            let ideal = 1.0 + rf * (1.0 / rg + GMIN);
            divider * ideal / (1.0 + ideal / a)
        };
        let (g_lo, g_hi) = (g(rf * (1.0 - t), rg * (1.0 + t)), g(rf * (1.0 + t), rg * (1.0 - t)));
        let what = format!("Rf {rf} Rg {rg} ±{t} Vos {vos}");
        checks.push(near(format!("{what}: gain low"), wc.gain[0], g_lo, 1e-9 * g_lo, "non-inverting gain formula"));
        checks.push(near(format!("{what}: gain high"), wc.gain[1], g_hi, 1e-9 * g_hi, "non-inverting gain formula"));
        checks.push(near(
            format!("{what}: offset low"),
            wc.offset[0],
            -g_hi * vos / divider,
            1e-12,
            "output offset = G·Vos",
        ));
        checks.push(near(
            format!("{what}: offset high"),
            wc.offset[1],
            g_hi * vos / divider,
            1e-12,
            "output offset = G·Vos",
        ));
        let x = req.source.max;
        checks.push(near(
            format!("{what}: output at max, high"),
            wc.output_at_max[1],
            g_hi * (x + vos / divider),
            1e-9 * g_hi * x,
            "non-inverting gain formula",
        ));
    }
    check(&checks);
}

#[test]
fn worst_case_contains_every_monte_carlo_build() {
    // Source: the worst-case bounds are extremes over the box every build is drawn from, so
    // the builds' min and max must lie inside them (rounding allowance 1e-12 relative).
    let mut checks = Vec::new();
    for (label, req) in all_requests() {
        let (c, _) = designed(&req);
        let t = tolerance(&req, &c, &cfg(10_000, 3));
        let (wc, mc) = (wc_of(&t), mc_of(&t));
        for j in 0..4 {
            let eps = 1e-12 * (1.0 + wc[j][0].abs().max(wc[j][1].abs()));
            checks.push(at_least(
                format!("{label} {} builds' min", Q[j]),
                mc[j].min,
                wc[j][0],
                eps,
                "worst case bounds the box",
            ));
            checks.push(at_most(
                format!("{label} {} builds' max", Q[j]),
                mc[j].max,
                wc[j][1],
                eps,
                "worst case bounds the box",
            ));
        }
    }
    check(&checks);
}

// ---------------------------------------------------------------------------------------
// Monte Carlo.

#[test]
fn same_seed_same_builds_other_seed_other_builds() {
    // Source: the contract of ToleranceConfig::seed (a portable, seeded generator).
    let req = request(COLD_STORE, "");
    let (c, _) = designed(&req);
    let json = |seed| serde_json::to_string(&tolerance(&req, &c, &cfg(2_000, seed)).monte_carlo).unwrap();
    let (a, b, other) = (json(11), json(11), json(12));
    let differ = |x: &str, y: &str| if x == y { 0.0 } else { 1.0 };
    check(&[
        near("same seed: identical JSON", differ(&a, &b), 0.0, 0.0, "same seed gives the same builds"),
        near("other seed: different JSON", differ(&a, &other), 1.0, 0.0, "another seed gives other builds"),
    ]);
}

#[test]
fn zero_tolerances_give_no_spread() {
    // Source: with nothing to vary every build is the nominal circuit, whose mapping is
    // design::predict's (the same model); its outputs sit inside the converter range and
    // the headroom by construction.
    let mut checks = Vec::new();
    for (name, json) in
        [("cold-store", COLD_STORE), ("tide-gauge", TIDE_GAUGE), ("soil-probe", SOIL_PROBE), ("bearing", BEARING)]
    {
        let req = request(json, ZERO_TOL);
        let (c, pred) = designed(&req);
        let t = tolerance(&req, &c, &cfg(500, 5));
        let nominal = [pred.output_at_min, pred.output_at_max, pred.gain, pred.offset];
        let m = &t.monte_carlo;
        for (j, s) in mc_of(&t).iter().enumerate() {
            checks.push(near(format!("{name} {} std", Q[j]), s.std, 0.0, 0.0, "no spread without tolerances"));
            checks.push(near(
                format!("{name} {} mean", Q[j]),
                s.mean,
                nominal[j],
                1e-9 * nominal[j].abs().max(1e-3),
                "design::predict",
            ));
            for e in 0..2 {
                checks.push(near(
                    format!("{name} {} worst case {e}", Q[j]),
                    wc_of(&t)[j][e],
                    nominal[j],
                    1e-9 * nominal[j].abs().max(1e-3),
                    "design::predict",
                ));
            }
        }
        checks.push(near(format!("{name} yield"), m.yield_, 1.0, 0.0, "nominal inside the converter range"));
        checks.push(near(
            format!("{name} yield with headroom"),
            m.yield_headroom,
            1.0,
            0.0,
            "nominal inside the headroom",
        ));
        let h = req.destination.headroom;
        checks.push(near(
            format!("{name} range-use fraction"),
            m.range_use_fraction,
            0.95 * (1.0 - 2.0 * h),
            1e-15,
            "0.95 × (1 − 2·headroom)",
        ));
        let counted: u32 = m.histograms.output_at_max.counts.iter().sum();
        checks.push(near(
            format!("{name} histogram holds every build"),
            counted as f64,
            500.0,
            0.0,
            "one count per build",
        ));
    }
    check(&checks);
}

#[test]
fn mean_and_spread_match_sampling_statistics() {
    // Source: central limit theorem — the mean of N builds lies within 4σ/√N of the
    // expectation (a false alarm 6·10⁻⁵ of the time per row, 0.3 % over the 54 rows; 3σ
    // would be 14 %), which for spreads of a few per cent is the nominal value to well below
    // that bound (common practice); a uniform spread over ±a has σ = a/√3.
    let mut checks = Vec::new();
    let n = 10_000usize;
    for (label, req) in all_requests() {
        let (c, pred) = designed(&req);
        let t = tolerance(&req, &c, &cfg(n, 21));
        let nominal = [pred.output_at_min, pred.output_at_max, pred.gain, pred.offset];
        for (j, s) in mc_of(&t).iter().enumerate() {
            let bound = 4.0 * s.std / (n as f64).sqrt() + 1e-12;
            checks.push(near(format!("{label} {} mean", Q[j]), s.mean, nominal[j], bound, "central limit theorem"));
        }
    }
    // Only Rf varies (±1 %, uniform): the gain 1 + Rf/Rg spreads as (G − 1)·t/√3; the sample
    // standard deviation of 10,000 uniform draws is within 2 % of σ (its own spread is
    // about σ·√(0.8/(4N)) = 0.45 %).
    let req = request(TIDE_GAUGE, "");
    let (rf, rg, tl) = (39.2e3, 1e3, 0.01);
    let c = plain_stage(rf, rg, tl, 0.0, 0.0);
    let t = tolerance(&req, &c, &cfg(n, 8));
    let sigma = rf / rg * tl / 3f64.sqrt();
    checks.push(near(
        "uniform ±1 % Rf: gain std",
        t.monte_carlo.gain.std,
        sigma,
        0.02 * sigma,
        "uniform over ±a has σ = a/√3",
    ));
    checks.push(near(
        "uniform ±1 % Rf: gain mean",
        t.monte_carlo.gain.mean,
        1.0 + rf / rg,
        3.0 * sigma / (n as f64).sqrt(),
        "central limit theorem",
    ));
    check(&checks);
}

#[test]
fn yield_counts_builds_past_the_converter_limit() {
    // Source: with the converter's top set exactly at the nominal output at the source's
    // maximum and Rf, Rg drawn independently from one symmetric spread, a build exceeds the
    // top exactly when Rf/Rg is above nominal, i.e. with probability 1/2 (symmetry); N builds
    // then land within 4·√(0.25/N) of that.
    let (rf, rg) = (39.2e3, 1e3);
    let c = plain_stage(rf, rg, 0.01, 0.01, 0.0);
    let base = request(TIDE_GAUGE, "");
    let top = Solver::new(&c).dc(base.source.max).unwrap().voltage("adc").unwrap();
    let mut v = serde_json::to_value(&base).unwrap();
    v["destination"]["max"] = serde_json::json!(top);
    let req = Request::from_value(&v).unwrap();
    let n = 10_000;
    let m = tolerance(&req, &c, &cfg(n, 4)).monte_carlo;
    check(&[near(
        "yield with the top at the nominal output",
        m.yield_,
        0.5,
        4.0 * (0.25 / n as f64).sqrt(),
        "symmetry of the spread",
    )]);
}

#[test]
fn odd_inputs_do_not_panic() {
    // Source: the engine's contract — no input panics; what cannot be computed is null.
    let req = request(COLD_STORE, "");
    let (c, _) = designed(&req);
    let none = tolerance(&req, &c, &ToleranceConfig { runs: 0, seed: 0, bins: 0 });
    // A voltage source from a node to itself closes a loop of sources: outside the kernel's
    // eliminations (a source between two other nodes is joined into one unknown).
    let mut odd = c.clone();
    if let Some(v) = odd.parts.iter_mut().find(|p| p.reference == "VPOS") {
        v.nodes = vec!["sense".to_string(), "sense".to_string()];
    }
    let refused = tolerance(&req, &odd, &cfg(100, 1));
    let mut empty = c.clone();
    empty.parts.clear();
    let bare = tolerance(&req, &empty, &cfg(100, 1));
    let wide = tolerance(&req, &c, &ToleranceConfig { runs: 10, seed: 1, bins: usize::MAX });
    let mut broken = c.clone();
    for p in broken.parts.iter_mut().filter(|p| p.kind == PartKind::Resistor && !p.bench) {
        p.value = f64::NAN;
    }
    let nan = tolerance(&req, &broken, &cfg(100, 1));
    check(&[
        near(
            "unbounded bins: capped",
            wide.monte_carlo.histograms.output_at_min.counts.len() as f64,
            MAX_BINS as f64,
            0.0,
            "ToleranceConfig::bins limit",
        ),
        // A NaN resistance falls to the solvers' 1 nΩ floor (as in the general solver), so
        // the builds still solve; the yield is a share, whatever it is.
        at_least("NaN part values: yield is a share", nan.monte_carlo.yield_, 0.0, 0.0, "yield counts builds"),
        at_most("NaN part values: yield is a share", nan.monte_carlo.yield_, 1.0, 0.0, "yield counts builds"),
        near(
            "no builds: yield is NaN (JSON null)",
            none.monte_carlo.yield_.is_nan() as u8 as f64,
            1.0,
            0.0,
            "no builds, nothing to count",
        ),
        near(
            "no builds: worst case still computed",
            none.worst_case.gain[0].is_finite() as u8 as f64,
            1.0,
            0.0,
            "worst case needs no builds",
        ),
        near(
            "unsupported circuit: stated as not available",
            refused.worst_case.method.starts_with("not available") as u8 as f64,
            1.0,
            0.0,
            "kernel refuses a loop of sources",
        ),
        near(
            "circuit without parts: stated as not available",
            bare.worst_case.method.starts_with("not available") as u8 as f64,
            1.0,
            0.0,
            "no output node",
        ),
    ]);
}

#[test]
fn spread_budget_of_plain_stage_follows_the_gain_formula() {
    // Source: the non-inverting gain formula y = (1 + Rf/Rg)·x + G·Vos; to first order a
    // resistor pair at ±t moves the output at x by ±2·x·(Rf/Rg)·t, an offset by ±G·Vos. The
    // offset the range allows at an end is (margin − resistor spread)/G, the margin the
    // distance from G·x to the nearer end of the 0 … 2.5 V converter range inside the
    // amplifier's swing; the budget's is the smaller over both ends. Tolerance 0.5 % on the
    // resistor spread: the first-order formula leaves out the t² term (0.25 % at 5 %).
    let req = request(TIDE_GAUGE, "");
    let mut rows = Vec::new();
    for (rf, rg, t, vos) in [(30e3, 1e3, 0.01, 1e-3), (10e3, 2e3, 0.001, 2e-3), (20e3, 1e3, 0.05, 0.2e-3)] {
        let c = plain_stage(rf, rg, t, t, vos);
        let b = tolerance(&req, &c, &cfg(0, 1)).budget.expect("a budget");
        let g = 1.0 + rf / rg;
        let (x_lo, x_hi) = (req.source.min, req.source.max);
        let what = format!("Rf {rf} Rg {rg} ±{t} Vos {vos}");
        let spread = |name: &str| b.contributors.iter().find(|c| c.what == name).map_or(0.0, |c| c.spread);
        let res_hi = 2.0 * x_hi * (rf / rg) * t;
        let res_lo = 2.0 * x_lo * (rf / rg) * t;
        // The worse end is the top (x_hi > x_lo), where the budget states each class.
        rows.push(near(
            format!("{what}: resistor spread at the top"),
            spread("resistor tolerances"),
            res_hi,
            5e-3 * res_hi,
            "first-order sensitivity of the gain formula",
        ));
        rows.push(near(
            format!("{what}: offset spread"),
            spread("amplifier input offset"),
            g * vos,
            1e-6 * g * vos,
            "output offset = G·Vos",
        ));
        let (lim_lo, lim_hi) = c.output_limits();
        let (lo, hi) = (lim_lo.max(0.0), lim_hi.min(2.5));
        let margin = (g * x_lo - lo).min(hi - g * x_hi);
        rows.push(near(format!("{what}: margin"), b.margin, margin, 1e-6, "distance to the converter range"));
        let allowed = ((g * x_lo - lo - res_lo) / g).min((hi - g * x_hi - res_hi) / g).max(0.0);
        rows.push(near(
            format!("{what}: largest offset"),
            b.offset_max.unwrap_or(f64::NAN),
            allowed,
            5e-3 * allowed.max(1e-6),
            "(margin − resistor spread)/G",
        ));
        // The converter's reference at ±0.2 %: a reading of y moves by ∓y·ε, so its class takes
        // y·ε at the worse end (the top), and nothing else moves.
        // The rail at ±5 %: nothing takes a level from it, so it moves the output only through
        // the amplifier's supply rejection (1e-4 for the 5 V class): G·V·tol·rejection.
        let mut with_rail = req.clone();
        with_rail.supply_tolerance = vec![0.05];
        let b = tolerance(&with_rail, &c, &cfg(0, 1)).budget.expect("a budget");
        let rail = b.contributors.iter().find(|c| c.what == "rail tolerance").map_or(0.0, |c| c.spread);
        let want = g * 5.0 * 0.05 * c.amplifier.supply_rejection;
        rows.push(near(
            format!("{what}: rail spread through the supply rejection"),
            rail,
            want,
            1e-3 * want,
            "offset change = supply change × rejection (the definition of the supply rejection ratio), times G",
        ));
        let mut with_ref = req.clone();
        with_ref.destination.reference_tolerance = 0.002;
        let b = tolerance(&with_ref, &c, &cfg(0, 1)).budget.expect("a budget");
        let spread = |name: &str| b.contributors.iter().find(|c| c.what == name).map_or(0.0, |c| c.spread);
        let nominal_top = Solver::new(&c).dc(x_hi).unwrap().voltage("adc").unwrap();
        rows.push(near(
            format!("{what}: reference spread at the top"),
            spread("converter reference"),
            nominal_top * 0.002,
            1e-6 * nominal_top,
            "a reading is y·V_ref,nominal/V_ref: a reference ε high reads y as y·(1 − ε) (common practice)",
        ));
    }
    check(&rows);
}
