//! The design: runs the pipeline for one request and gathers the result and its checks.
//!
//! [`design`] never fails: a request that cannot be built comes back with error checks that
//! say why and what would make it possible, and with whatever could still be computed.
//! `predicted` comes from the MNA solver on the rounded circuit with the finite-gain,
//! finite-bandwidth amplifier model — the same model the netlist exports — so it agrees with
//! a SPICE3 simulation of that netlist.

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::analysis::{analyse, Analysis, AnalysisConfig, Nominal};
use crate::circuit::{Circuit, Part, PartKind, Stage};
use crate::diag::{has_error, Check, Severity};
use crate::request::{Coupling, Request};
use crate::solve::Solver;
use crate::synth::{self, Target};
use crate::units::{format, Quantity};

/// Rule for the amplifier's bandwidth: closed-loop bandwidth (GBW / noise gain) at least this
/// many times `band_high`, which keeps a single-pole amplifier's gain error at `band_high`
/// within 0.5 % (1/√(1 + 0.1²)).
pub const GBW_MARGIN: f64 = 10.0;

/// Everything the engine says about one request.
#[derive(Debug, Clone, Serialize)]
pub struct Design {
    pub name: String,
    /// The normalised request.
    pub request: Request,
    pub rails: Rails,
    /// The amplifier as assumed (class figures filled in where the request is silent).
    pub amplifier: Amplifier,
    /// What the amplifier must at least provide for this design.
    pub requirements: Option<Requirements>,
    pub topology: String,
    pub target: Option<Target>,
    pub stages: Vec<Stage>,
    /// Parts to build.
    pub parts: Vec<PartRow>,
    /// The bench around them (sensor model, supplies, converter load).
    pub bench: Vec<PartRow>,
    pub predicted: Option<Predicted>,
    /// DC transfer, frequency response, noise, tolerance spread and loading.
    pub analysis: Option<Analysis>,
    pub equations: Vec<String>,
    pub checks: Vec<Check>,
    pub cautions: Vec<String>,
    /// Converter codes back to the sensor's quantity (filled in after the analyses).
    pub scaling: Option<crate::scaling::Scaling>,
    /// The anti-alias filter: response, order, sections (f_n, Q wanted and rounded).
    pub filter: Option<crate::synth::filter::FilterDesign>,
    /// The converter drive: charge bucket, isolation resistor, protection.
    pub drive: Option<crate::synth::drive::DriveDesign>,
    /// Current loops: the shunt, its burden and where the fault bands land in codes.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub current_loop: Option<crate::synth::front::LoopDesign>,
    /// High-impedance sensors: the follower's bias path, corners and bias-current offset.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub high_impedance: Option<crate::synth::buffer::BufferDesign>,
    /// Photodiodes: the transimpedance stage.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub photodiode: Option<crate::synth::tia::TiaDesign>,
    /// Differential sensors: the difference amplifier and its common-mode rejection.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub differential: Option<crate::synth::diffamp::DiffDesign>,
    /// Bridges: excitation current, self-heating, linearity.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bridge: Option<crate::synth::diffamp::BridgeDesign>,
    /// Pairs and bridges behind an instrumentation amplifier: its first stage.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub instrumentation: Option<crate::synth::inamp::InampDesign>,
    /// The circuit model every output derives from (absent when synthesis was impossible).
    #[serde(skip)]
    pub circuit: Option<Circuit>,
}

/// One part as listed in the output.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PartRow {
    #[serde(rename = "ref")]
    pub reference: String,
    pub kind: String,
    /// SI base units (Ω, F, V; GBW in Hz for an amplifier).
    pub value: f64,
    /// The value formatted with prefix and unit, e.g. "4.7 kΩ".
    pub display: String,
    pub tolerance: Option<f64>,
    pub nodes: Vec<String>,
    pub stage: String,
    pub purpose: String,
}

/// The mapping the rounded circuit actually realises.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Predicted {
    /// V/V: DC coupling, the slope between the source extremes; AC coupling, the mid-band gain (signed).
    pub gain: f64,
    /// DC coupling: the intercept b; AC coupling: the output's DC level.
    pub offset: f64,
    pub output_at_min: f64,
    pub output_at_max: f64,
    /// −3 dB points of the response from the sensor EMF to the converter input, where they exist.
    pub band_low: Option<f64>,
    pub band_high: Option<f64>,
}

/// The amplifier requirements this design places.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Requirements {
    pub supply: f64,
    pub output_low: f64,
    pub output_high: f64,
    pub input_low: f64,
    pub input_high: f64,
    pub gbw_min: f64,
    pub slew_rate_min: f64,
    pub noise_gain: f64,
    pub summary: Vec<String>,
}

/// Designs the interface for `req` with the analyses configured by the request.
pub fn design(req: &Request) -> Design {
    design_with(req, &AnalysisConfig::from_request(req))
}

/// How far the target is pulled in beyond the miss on each further attempt, as a fraction
/// of the converter span (rounding may jump to other values after a small pull).
const NUDGES: [f64; 8] = [1e-4, 1e-3, 3e-3, 1e-2, 3e-2, 0.1, 0.2, 0.3];

/// Designs the interface for `req` with explicit analysis options.
pub fn design_with(req: &Request, cfg: &AnalysisConfig) -> Design {
    let rails = Rails::choose(req);
    let amp = Amplifier::resolve(&req.amplifier, rails);
    // The front end (a current loop's shunt) turns the sensor into the single-ended voltage
    // source the gain stage is synthesised for (`syn`); analyses use the request itself.
    let buffer = synth::buffer::plan(req, &amp, rails);
    let tia = synth::tia::plan(req, &amp, rails);
    let bridge = synth::diffamp::bridge_equivalent(req);
    let (syn, mut current_loop, front_error) = match (synth::front::plan(req), &buffer, &tia) {
        _ if bridge.is_some() => (std::borrow::Cow::Owned(bridge.as_ref().map(|b| b.0.clone()).unwrap_or_else(|| req.clone())), None, None),
        (Some(Ok(l)), _, _) => (std::borrow::Cow::Owned(synth::front::equivalent(req, &l)), Some(l), None),
        (Some(Err(check)), _, _) => (std::borrow::Cow::Borrowed(req), None, Some(check)),
        (None, Some(b), _) => (std::borrow::Cow::Owned(synth::buffer::equivalent(req, b)), None, None),
        (None, None, Some(t)) => (std::borrow::Cow::Owned(synth::tia::equivalent(req, t)), None, None),
        (None, None, None) => (std::borrow::Cow::Borrowed(req), None, None),
    };
    // A pair (a bridge as its Thévenin pair) behind an instrumentation amplifier: the first
    // stage turns it into a stiff pair of G1 times its range, which the difference stage is
    // synthesised for.
    let pair: Request = syn.clone().into_owned();
    let inamp = synth::target(&pair, &amp, rails, &mut Vec::new()).and_then(|t| {
        let why = synth::inamp::wanted(req, t.gain)?;
        Some(synth::inamp::plan(&pair, &amp, rails, t.gain, bridge.as_ref().map_or(0.0, |b| b.1.zero_offset), why))
    });
    let syn = match &inamp {
        Some(d) => std::borrow::Cow::Owned(synth::inamp::equivalent(&pair, d)),
        None => syn,
    };
    let syn: &Request = &syn;
    let mut checks = feasibility(syn, rails, &amp);
    checks.extend(front_error);
    let mut out = Design {
        name: req.name.clone(),
        request: req.clone(),
        rails,
        amplifier: amp.clone(),
        requirements: None,
        topology: String::new(),
        target: None,
        stages: Vec::new(),
        parts: Vec::new(),
        bench: Vec::new(),
        predicted: None,
        analysis: None,
        equations: Vec::new(),
        checks: Vec::new(),
        cautions: cautions(req, rails),
        scaling: None,
        filter: None,
        drive: None,
        current_loop: None,
        high_impedance: None,
        photodiode: None,
        differential: None,
        bridge: None,
        instrumentation: None,
        circuit: None,
    };
    // A bridge's own figures do not depend on the circuit after it.
    if let Some((_, bd)) = &bridge {
        checks.extend(synth::diffamp::bridge_checks(req, bd));
        out.bridge = Some(bd.clone());
    }
    if has_error(&checks) {
        out.checks = checks;
        return out;
    }
    let Some(mut target) = synth::target(syn, &amp, rails, &mut checks) else {
        out.checks = checks;
        return out;
    };
    let d = &req.destination;
    let span = d.max - d.min;
    // Inside the headroom and inside the amplifier's swing (half the synthesis margin): a
    // rounded stage whose extreme lands on the swing limit clips there.
    let (out_lo, out_hi) = amp.output_limits(rails);
    let (band_lo, band_hi) = ((d.min + d.headroom * span).max(out_lo + 0.5 * synth::SWING_MARGIN), (d.max - d.headroom * span).min(out_hi - 0.5 * synth::SWING_MARGIN));
    // Rounding and the amplifier's finite gain can move the extremes by a hair past the
    // headroom; pull the target in by that much and design again (at most a few times).
    let mut result = None;
    // The filter and the drive do not depend on the gain stage: plan them once.
    let chain = synth::chain::plan(syn, &amp, rails);
    // The attempt that misses least is kept (an extreme held at the swing limit hides how far
    // past it the stage would go, so a later, larger pull can be the one that fits).
    let mut best = f64::INFINITY;
    for attempt in 0..NUDGES.len() {
        let Some(s) = synth::synthesize_with_chain(syn, &amp, rails, target, &chain) else { break };
        let Some(p) = predict(syn, &s.circuit) else { break };
        let (lo, hi) = (p.output_at_min.min(p.output_at_max), p.output_at_min.max(p.output_at_max));
        let under = (band_lo - lo).max(0.0);
        let over = (hi - band_hi).max(0.0);
        let done = under <= synth::HEADROOM_SLACK * span && over <= synth::HEADROOM_SLACK * span;
        if under + over < best {
            best = under + over;
            result = Some((s, p));
        }
        if done {
            break;
        }
        // Rounding may jump to other values after a small shrink; widen the step each time.
        let nudge = NUDGES[attempt] * span;
        target = shrink(target, syn, if under > 0.0 { under + nudge } else { 0.0 }, if over > 0.0 { over + nudge } else { 0.0 });
    }
    let Some((mut s, mut p)) = result else {
        checks.push(Check::error(
            "no_realisation",
            "No stage built from the requested series inside the resistor window realises this mapping; widen parts.resistor_min … resistor_max or choose a finer series.",
        ));
        out.checks = checks;
        return out;
    };
    // Checks of the gain stage in the synthesis view (volts at `sense`).
    let req_amp = requirements(syn, &s, &amp, rails);
    checks.extend(design_checks(syn, &s, &p, &amp, rails, &req_amp));
    if let Some(l) = current_loop.as_mut() {
        // The equivalent sensor's impedance is the shunt, which the loop checks cover.
        checks.retain(|c| c.id != "sensor_impedance");
        synth::front::to_loop(&mut s.circuit, req, l);
        let Some(q) = with_front(req, &mut s, synth::front::equations(req, l)) else { return unsolved(out, checks) };
        p = q;
        l.bands = synth::front::bands(req, &s.circuit);
        checks.extend(synth::front::checks(req, l));
    }
    if let Some(b) = &buffer {
        // The gain stage's source is the follower, which the buffer checks cover.
        checks.retain(|c| c.id != "sensor_impedance");
        synth::buffer::insert(&mut s.circuit, req, b, rails);
        let Some(q) = with_front(req, &mut s, synth::buffer::equations(req, b)) else { return unsolved(out, checks) };
        p = q;
        checks.extend(synth::buffer::checks(req, b, &amp));
    }
    if let Some(ia) = &inamp {
        synth::inamp::insert(&mut s.circuit, &pair, ia, rails);
        s.topology = synth::inamp::topology(ia, &s.topology);
        let Some(q) = with_front(&pair, &mut s, synth::inamp::equations(&pair, ia)) else { return unsolved(out, checks) };
        p = q;
        checks.extend(synth::inamp::checks(&pair, ia, &amp, rails));
        // The legs now meet the protection resistors, not the difference stage.
        checks.retain(|c| c.id != "input_protection");
        checks.extend(input_protection(&pair, &s.circuit, rails));
    }
    if matches!(req.source.kind, crate::request::SourceKind::Differential | crate::request::SourceKind::Bridge) {
        if let Some((dd, check)) = synth::diffamp::report(&pair, &s.circuit, inamp.as_ref().map(|d| d.first_gain)) {
            out.differential = Some(dd);
            checks.push(check);
        }
    }
    if let Some((_, bd)) = &bridge {
        synth::diffamp::insert_bridge(&mut s.circuit, req);
        checks.extend(synth::diffamp::zero_trim(req, bd, p.gain.abs()));
    }
    if let Some(t) = &tia {
        checks.retain(|c| c.id != "sensor_impedance");
        synth::tia::insert(&mut s.circuit, req, t, rails);
        let Some(q) = with_front(req, &mut s, synth::tia::equations(req, t)) else { return unsolved(out, checks) };
        p = q;
        checks.extend(synth::tia::checks(req, t, &amp));
    }
    let (analysis, analysis_checks) = analyse(req, &s.circuit, Nominal { gain: p.gain, f_low_3db: p.band_low, f_high_3db: p.band_high }, cfg);
    checks.extend(analysis_checks);
    checks.extend(synth::chain::filter_checks(req, &s, analysis.alias.map(|a| a.achieved_db), Some(analysis.ac.gain_band_high_db - analysis.ac.gain_mid_db)));
    out.analysis = Some(analysis);
    out.filter = s.filter.clone();
    out.drive = s.drive.clone();
    out.topology = s.topology.clone();
    out.target = Some(s.target);
    out.stages = s.circuit.stages.clone();
    out.parts = s.circuit.build_parts().into_iter().map(row).collect();
    out.bench = s.circuit.parts.iter().filter(|p| p.bench).map(row).collect();
    out.predicted = Some(p);
    out.equations = s.equations.clone();
    let mut req_amp = req_amp;
    if let Some(ia) = &inamp {
        widen_for_first_stage(&mut req_amp, ia, rails, req.source.band_high);
    }
    out.requirements = Some(req_amp);
    crate::order::sort_by(&mut checks, |a, b| b.severity.cmp(&a.severity));
    out.checks = checks;
    out.circuit = Some(s.circuit);
    out.current_loop = current_loop;
    out.high_impedance = buffer;
    out.photodiode = tia;
    out.instrumentation = inamp;
    out.scaling = crate::scaling::scaling(&out);
    out
}

/// After a front end (shunt, follower, transimpedance stage) went in front of the gain
/// stage: its equations first, then the mapping of the whole circuit for the request itself.
fn with_front(req: &Request, s: &mut synth::Synthesis, mut eqs: Vec<String>) -> Option<Predicted> {
    eqs.append(&mut s.equations);
    s.equations = eqs;
    predict(req, &s.circuit)
}

/// The design of a circuit that does not solve once its front end is in: an error check.
fn unsolved(mut out: Design, mut checks: Vec<Check>) -> Design {
    checks.push(Check::error("no_realisation", "The circuit with its sensor's front end does not solve; this is a fault in Rangefit, please report the request."));
    out.checks = checks;
    out
}

/// The mapping of a rounded circuit, from the solver.
pub fn predict(req: &Request, c: &Circuit) -> Option<Predicted> {
    let solver = Solver::new(c);
    let s = &req.source;
    match s.coupling {
        Coupling::Dc => {
            let y1 = solver.dc(s.min).ok()?.voltage("adc")?;
            let y2 = solver.dc(s.max).ok()?.voltage("adc")?;
            let gain = (y2 - y1) / (s.max - s.min);
            let h0 = solver.transfer(0.0, "adc").ok()?.norm();
            let (_, band_high) = corners(&solver, h0, None, s.band_high.max(1.0));
            Some(Predicted { gain, offset: y1 - gain * s.min, output_at_min: y1, output_at_max: y2, band_low: None, band_high })
        }
        Coupling::Ac => {
            let mid = 0.5 * (s.min + s.max);
            let level = solver.dc(mid).ok()?.voltage("adc")?;
            let f_mid = (s.band_low * s.band_high).sqrt();
            let h = solver.transfer(f_mid, "adc").ok()?;
            let gain = if h.re >= 0.0 { h.norm() } else { -h.norm() };
            let (band_low, band_high) = corners(&solver, h.norm(), Some(f_mid), f_mid);
            Some(Predicted {
                gain,
                offset: level,
                output_at_min: level + gain * (s.min - mid),
                output_at_max: level + gain * (s.max - mid),
                band_low,
                band_high,
            })
        }
    }
}

/// −3 dB points relative to `reference` magnitude, searched below `low_from` (if given) and
/// above `high_from` on a log grid of 10 points per decade, then refined by bisection.
fn corners(solver: &Solver, reference: f64, low_from: Option<f64>, high_from: f64) -> (Option<f64>, Option<f64>) {
    let level = reference / std::f64::consts::SQRT_2;
    let mag = |f: f64| solver.transfer(f, "adc").map(|h| h.norm()).unwrap_or(0.0);
    let search = |start: f64, step: f64, decades: f64| -> Option<f64> {
        let n = (decades * 10.0) as usize;
        let mut f_prev = start;
        for i in 1..=n {
            let f = start * 10f64.powf(step * i as f64 / 10.0);
            if mag(f) < level {
                let (mut a, mut b) = (f_prev.ln(), f.ln());
                // 30 halvings of a tenth of a decade: relative precision below 1e-9.
                for _ in 0..30 {
                    let c = 0.5 * (a + b);
                    if mag(c.exp()) < level {
                        b = c;
                    } else {
                        a = c;
                    }
                }
                return Some((0.5 * (a + b)).exp());
            }
            f_prev = f;
        }
        None
    };
    let low = low_from.and_then(|f| search(f, -1.0, 8.0));
    (low, search(high_from, 1.0, 10.0))
}

/// Shrinks the target range by `lo` at its lower end and `hi` at its upper end.
fn shrink(t: Target, req: &Request, lo: f64, hi: f64) -> Target {
    let (a, b) = (t.at_min.min(t.at_max) + lo, t.at_min.max(t.at_max) - hi);
    let s = &req.source;
    let m = (b - a) / (s.max - s.min);
    match s.coupling {
        Coupling::Dc => Target { at_min: a, at_max: b, gain: m, offset: a - m * s.min },
        Coupling::Ac => Target { at_min: a, at_max: b, gain: m, offset: 0.5 * (a + b) },
    }
}

fn row(p: &Part) -> PartRow {
    let q = match p.kind {
        PartKind::Resistor => Quantity::Resistance,
        PartKind::Capacitor => Quantity::Capacitance,
        PartKind::OpAmp => Quantity::Frequency,
        PartKind::VoltageSource | PartKind::Diode => Quantity::Voltage,
        PartKind::CurrentSource => Quantity::Current,
    };
    let display = match p.kind {
        PartKind::OpAmp => format!("amplifier, GBW ≥ {}", format(p.value, q)),
        PartKind::Diode => format!("Schottky, V_F ≈ {}", format(p.value, q)),
        _ => format(p.value, q),
    };
    PartRow {
        reference: p.reference.clone(),
        kind: p.kind.name().to_string(),
        value: p.value,
        display,
        tolerance: p.tolerance,
        nodes: p.nodes.clone(),
        stage: p.stage.name().to_string(),
        purpose: p.purpose.clone(),
    }
}

fn v(x: f64) -> String {
    format(x, Quantity::Voltage)
}

/// A plain number with three significant digits.
fn sig3(x: f64) -> String {
    crate::units::format(x, Quantity::Ratio)
}

fn hz(x: f64) -> String {
    format(x, Quantity::Frequency)
}

/// Checks that need no circuit: impossible or doubtful requests.
fn feasibility(req: &Request, rails: Rails, amp: &Amplifier) -> Vec<Check> {
    let mut c = Vec::new();
    let s = &req.source;
    let d = &req.destination;
    if !(s.max > s.min) {
        c.push(Check::error("zero_span", format!("The sensor's min and max are both {}; a span is needed to map onto the converter. Give the sensor's lowest and highest output.", v(s.min))));
    }
    if !(d.max > d.min) {
        c.push(Check::error("zero_destination_span", "The converter's input min and max are equal; give its input range, e.g. 0 … 3.3 V."));
    }
    let nyquist = 0.5 * d.sample_rate;
    if s.band_high > nyquist {
        c.push(Check::error(
            "band_above_nyquist",
            format!(
                "The band reaches {} but the converter samples at {}, so everything above {} folds back into the band. Raise the sample rate to at least {} (2.5× the band edge leaves room for an anti-alias filter) or lower band_high.",
                hz(s.band_high), hz(d.sample_rate), hz(nyquist), hz(2.5 * s.band_high)
            ),
        ));
    } else if s.band_high > 0.4 * d.sample_rate {
        c.push(Check::warning(
            "band_near_nyquist",
            format!("The band edge {} is above 40 % of the sample rate {}; an anti-alias filter cannot fall steeply enough in the little room left. A sample rate of {} or more makes it practical.", hz(s.band_high), hz(d.sample_rate), hz(2.5 * s.band_high)),
        ));
    }
    if s.band_high <= s.band_low {
        c.push(Check::error("band_order", format!("band_high ({}) must be above band_low ({}).", hz(s.band_high), hz(s.band_low))));
    }
    if s.coupling == Coupling::Ac && s.band_low <= 0.0 {
        c.push(Check::error("ac_needs_band_low", "AC coupling blocks DC, so band_low must be above 0 Hz; give the lowest frequency that must pass, or choose DC coupling."));
    }
    if rails.pos <= 0.0 {
        c.push(Check::error("no_positive_rail", "No positive rail is listed in supplies."));
    }
    let total = rails.total();
    if total > amp.supply_max + 1e-9 {
        c.push(Check::error("supply_too_high", format!("The amplifier runs from {} in total but its limit is {}; use lower rails or give an amplifier with a higher supply_max.", v(total), v(amp.supply_max))));
    } else if total < amp.supply_min - 1e-9 {
        c.push(Check::error("supply_too_low", format!("The amplifier needs at least {} in total but the rails give {}; use a higher rail or an amplifier with a lower supply_min.", v(amp.supply_min), v(total))));
    }
    c
}

/// The amplifier requirements of a synthesised design.
fn requirements(req: &Request, s: &synth::Synthesis, amp: &Amplifier, rails: Rails) -> Requirements {
    let ng = noise_gain(&s.circuit);
    let gain_gbw = GBW_MARGIN * ng * req.source.band_high;
    let filter_gbw = s.filter.as_ref().map_or(0.0, |f| f.gbw_min);
    let gbw_min = gain_gbw.max(filter_gbw);
    let vpk = 0.5 * (s.target.at_max - s.target.at_min).abs();
    // With a filter, out-of-band content at the stated level reaches the amplifiers up to
    // the corner at that level (common practice: slew for the larger of the two sines).
    let f_slew = s.filter.as_ref().map_or(req.source.band_high, |f| req.source.band_high.max(req.filter.out_of_band_level * f.corner));
    let slew_rate_min = 2.0 * std::f64::consts::PI * f_slew * vpk;
    let (out_lo, out_hi) = (s.target.at_min.min(s.target.at_max), s.target.at_min.max(s.target.at_max));
    let (in_lo, in_hi) = s.plus_range;
    let _ = amp;
    let summary = vec![
        format!("runs from {} (rails {} and {})", v(rails.total()), v(rails.pos), v(rails.neg)),
        format!("output reaches {} … {} ({} from the lower rail, {} from the upper)", v(out_lo), v(out_hi), v(out_lo - rails.neg), v(rails.pos - out_hi)),
        format!("input common-mode range covers {} … {}", v(in_lo), v(in_hi)),
        if filter_gbw > gain_gbw {
            format!("gain-bandwidth ≥ {} for the filter sections (100 × noise gain × Q × f_n; the gain stage needs {})", hz(gbw_min), hz(gain_gbw))
        } else {
            format!("gain-bandwidth ≥ {} (noise gain {:.3} × {} × {})", hz(gbw_min), ng, hz(req.source.band_high), GBW_MARGIN)
        },
        format!("slew rate ≥ {} V/µs for a full-swing sine at {}", sig3(slew_rate_min * 1e-6), hz(f_slew)),
    ];
    Requirements { supply: rails.total(), output_low: out_lo, output_high: out_hi, input_low: in_lo, input_high: in_hi, gbw_min, slew_rate_min, noise_gain: ng, summary }
}

/// Widens the amplifier requirements of the gain stage by what an instrumentation
/// amplifier's first stage asks of the same amplifiers: its outputs' and inputs' ranges and
/// its gain-bandwidth (the summary's output, input and gain-bandwidth lines follow).
fn widen_for_first_stage(r: &mut Requirements, ia: &synth::inamp::InampDesign, rails: Rails, band_high: f64) {
    r.output_low = r.output_low.min(ia.output_range.0);
    r.output_high = r.output_high.max(ia.output_range.1);
    r.input_low = r.input_low.min(ia.input_range.0);
    r.input_high = r.input_high.max(ia.input_range.1);
    r.summary[1] = format!("output reaches {} … {} ({} from the lower rail, {} from the upper)", v(r.output_low), v(r.output_high), v(r.output_low - rails.neg), v(rails.pos - r.output_high));
    r.summary[2] = format!("input common-mode range covers {} … {}", v(r.input_low), v(r.input_high));
    if ia.gbw_needed > r.gbw_min {
        r.gbw_min = ia.gbw_needed;
        r.summary[3] = format!("gain-bandwidth ≥ {} for the instrumentation amplifier's first stage (100 × its gain {:.3} × {})", hz(r.gbw_min), ia.first_gain, hz(band_high));
    }
}

/// Noise gain of the (first) amplifier: 1 + R_f·Σ(1/R) over the other resistors at its − input
/// (the sensor's impedance added to a leg that comes from the sensor).
pub fn noise_gain(c: &Circuit) -> f64 {
    let Some(u) = c.parts.iter().find(|p| p.kind == PartKind::OpAmp) else { return 1.0 };
    let (inn, out) = (&u.nodes[1], &u.nodes[4]);
    if inn == out {
        return 1.0;
    }
    let rs = c.part("RSENSE").map(|p| p.value).unwrap_or(0.0);
    let mut rf = None;
    let mut g = 0.0;
    for p in c.parts.iter().filter(|p| p.kind == PartKind::Resistor && !p.bench && p.nodes.contains(inn)) {
        let other = if &p.nodes[0] == inn { &p.nodes[1] } else { &p.nodes[0] };
        if other == out {
            rf = Some(p.value);
        } else {
            g += 1.0 / (p.value + if other == "sense" { rs } else { 0.0 });
        }
    }
    rf.map_or(1.0, |rf| 1.0 + rf * g)
}

fn design_checks(req: &Request, s: &synth::Synthesis, p: &Predicted, amp: &Amplifier, rails: Rails, r: &Requirements) -> Vec<Check> {
    let mut c = s.checks.clone();
    let d = &req.destination;
    let span = d.max - d.min;
    let (lo, hi) = (p.output_at_min.min(p.output_at_max), p.output_at_min.max(p.output_at_max));
    let slack = synth::HEADROOM_SLACK * span;
    let (want_lo, want_hi) = (d.min + d.headroom * span - slack, d.max - d.headroom * span + slack);
    let used = (hi - lo) / span * 100.0;
    if lo >= want_lo && hi <= want_hi {
        c.push(Check::ok("headroom", format!("The sensor's range lands on {} … {}, {:.1} % of the converter span, inside the {:.1} % headroom at each end.", v(lo), v(hi), used, d.headroom * 100.0)));
    } else {
        let v4 = |x: f64| crate::units::format_sig(x, Quantity::Voltage, 5);
        c.push(Check::error("headroom", format!("The sensor's range lands on {} … {}, outside the wanted {} … {}; the amplifier cannot reach that far on these rails, or rounding to the series could not keep it inside. A finer series or a little more headroom helps.", v4(lo), v4(hi), v4(want_lo), v4(want_hi))));
    }
    // Below a nanovolt the error is rounding noise of the arithmetic, not of the parts.
    let rounding_error = if s.rounding_error < 1e-9 { 0.0 } else { s.rounding_error };
    let err_pct = rounding_error / span * 100.0;
    let lsb = span / 2f64.powi(d.bits as i32);
    let msg = format!("After rounding to {} the mapping is off by at most {} ({:.3} % of the span, {:.1} LSB) from the ideal; the headroom absorbs it and a two-point calibration removes it.", req.parts.resistor_series.name(), v(rounding_error), err_pct, rounding_error / lsb);
    c.push(if err_pct <= 0.5 { Check::ok("rounding", msg) } else { Check::warning("rounding", format!("{msg} A finer series (E96) reduces it.")) });
    let (in_lo, in_hi) = amp.input_limits(rails);
    let (plo, phi) = s.plus_range;
    if plo < in_lo - 1e-9 || phi > in_hi + 1e-9 {
        c.push(Check::error("common_mode", format!("The amplifier's + input swings {} … {}, outside its input range {} … {} on these rails; choose an amplifier with rail-to-rail inputs or widen the rails.", v(plo), v(phi), v(in_lo), v(in_hi))));
    } else {
        c.push(Check::ok("common_mode", format!("The amplifier's + input stays within {} … {}, inside its input range {} … {}.", v(plo), v(phi), v(in_lo), v(in_hi))));
    }
    let filter_gbw = s.filter.as_ref().map_or(0.0, |f| f.gbw_min);
    if filter_gbw > amp.gbw && filter_gbw >= r.gbw_min {
        c.push(Check::warning("gbw", format!("The amplifier's gain-bandwidth {} is below the {} the filter sections need (100 × noise gain × Q × f_n for the highest-Q section); their response will peak or droop. Choose a faster amplifier.", hz(amp.gbw), hz(filter_gbw))));
    } else if r.gbw_min > amp.gbw {
        c.push(Check::warning("gbw", format!("The amplifier's gain-bandwidth {} is below the {} this gain and band need (noise gain {:.2} × band {} × {}); the gain will droop toward the band edge. Choose a faster amplifier or split the gain over two stages.", hz(amp.gbw), hz(r.gbw_min), r.noise_gain, hz(req.source.band_high), GBW_MARGIN)));
    } else {
        c.push(Check::ok("gbw", format!("Gain-bandwidth {} covers the {} needed (noise gain {:.2}).", hz(amp.gbw), hz(r.gbw_min), r.noise_gain)));
    }
    let f_slew = r.slew_rate_min / (2.0 * std::f64::consts::PI * (0.5 * (s.target.at_max - s.target.at_min).abs()).max(1e-12));
    if r.slew_rate_min > amp.slew_rate {
        c.push(Check::warning("slew_rate", format!("A full-swing sine at {} needs {} V/µs but the amplifier slews {} V/µs; choose a faster amplifier or lower band_high.", hz(f_slew), sig3(r.slew_rate_min * 1e-6), sig3(amp.slew_rate * 1e-6))));
    } else {
        c.push(Check::ok("slew_rate", format!("Slew rate {:.3} V/µs covers the {:.3} V/µs a full-swing sine at {} needs.", amp.slew_rate * 1e-6, r.slew_rate_min * 1e-6, hz(f_slew))));
    }
    if let Some(fh) = p.band_high {
        if fh < req.source.band_high {
            c.push(Check::warning("bandwidth", format!("The response falls 3 dB at {}, below the band edge {}.", hz(fh), hz(req.source.band_high))));
        }
    }
    if let (Some(fl), Coupling::Ac) = (p.band_low, req.source.coupling) {
        if fl > req.source.band_low {
            c.push(Check::warning("band_low", format!("The response falls 3 dB at {}, above band_low {}.", hz(fl), hz(req.source.band_low))));
        }
    }
    let rs = req.source.impedance;
    if let Some(circuit) = Some(&s.circuit) {
        let big: Vec<String> = circuit.parts.iter().filter(|q| q.kind == PartKind::Capacitor && q.value > 100e-6).map(|q| format!("{} ({})", q.reference, format(q.value, Quantity::Capacitance))).collect();
        if !big.is_empty() {
            c.push(Check::warning("large_capacitor", format!("{} is very large because band_low is low; consider DC coupling or a higher band_low.", big.join(", "))));
        }
    }
    c.extend(synth::chain::drive_checks(req, s.drive.as_ref()));
    c.extend(input_protection(req, &s.circuit, rails));
    if rs > 0.0 {
        c.push(Check::ok("sensor_impedance", format!("The sensor's {} impedance is part of the gain equations.", format(rs, Quantity::Resistance))));
    }
    if !amp.assumed.is_empty() {
        c.push(Check::new("amplifier_assumed", Severity::Ok, format!("Figures not given in the request ({}) are those of a generic {}; any amplifier meeting the stated requirements will do.", amp.assumed.join(", "), amp.class)));
    }
    c
}

/// The sensor side: when the sensor's range reaches beyond the rails, how much fault
/// voltage the resistance between the sensor and the amplifier inputs tolerates with the
/// injection current limited (the amplifier's datasheet governs its input current).
fn input_protection(req: &Request, c: &Circuit, rails: Rails) -> Vec<Check> {
    let src = &req.source;
    // AC coupling: the coupling capacitor keeps the sensor's DC level off the amplifier; a
    // current sensor sets no voltage of its own.
    if src.coupling == Coupling::Ac || src.kind.quantity() != Quantity::Voltage {
        return Vec::new();
    }
    // A differential pair's legs sit at the common mode ± half the signal.
    let (lo, hi) = match (src.common_mode_min, src.common_mode_max) {
        (Some(a), Some(b)) => {
            let half = 0.5 * src.min.abs().max(src.max.abs());
            (a - half, b + half)
        }
        _ => (src.min, src.max),
    };
    let beyond = hi > rails.pos + crate::synth::drive::CLAMP_DROP || lo < rails.neg - crate::synth::drive::CLAMP_DROP;
    if !beyond {
        return Vec::new();
    }
    let inputs = ["sense", "sensep", "sensen"];
    let direct = c.parts.iter().any(|p| p.kind == PartKind::OpAmp && p.nodes.iter().take(2).any(|n| inputs.contains(&n.as_str())));
    let series = c.parts.iter().filter(|p| !p.bench && p.kind == PartKind::Resistor && p.nodes.iter().any(|n| inputs.contains(&n.as_str()))).map(|p| p.value).fold(f64::INFINITY, f64::min);
    let limit = req.destination.injection_limit;
    if direct || !series.is_finite() {
        return vec![Check::warning("input_protection", format!("The sensor reaches {} … {}, beyond the rails {} … {}, and meets an amplifier input with no series resistor; add one of at least (excess − 0.3 V)/{} in front of it.", v(lo), v(hi), v(rails.neg), v(rails.pos), format(limit, Quantity::Current)))];
    }
    let tolerated = series * limit + crate::synth::drive::CLAMP_DROP;
    vec![Check::ok(
        "input_protection",
        format!("The sensor reaches {} … {}, beyond the rails {} … {}; the input network keeps the amplifier's inputs inside them over that range, and its {} series resistance keeps a fault up to {} beyond a rail under {} into the input's protection (the amplifier's datasheet governs).", v(lo), v(hi), v(rails.neg), v(rails.pos), format(series, Quantity::Resistance), v(tolerated), format(limit, Quantity::Current)),
    )]
}

/// Safety cautions shown with every design.
fn cautions(req: &Request, rails: Rails) -> Vec<String> {
    let mut v = vec![
        "Sensors tied to mains or other high voltages need isolation rated for that voltage before anything here connects to them.".to_string(),
        "Never exceed the converter's absolute maximum input, including during power-up, power-down and faults.".to_string(),
        "A design for safety- or medically-relevant use must be checked by a qualified person; follow local codes and licensed practice.".to_string(),
    ];
    if req.source.kind == crate::request::SourceKind::HighImpedance {
        v.push("Above about 100 MΩ, leakage over the board decides the reading: keep the input node off solder mask and flux, surround it with a guard ring driven by the follower's output, and keep the assembly clean and dry.".to_string());
    }
    if req.source.kind == crate::request::SourceKind::CurrentLoop {
        v.push("A current loop runs from its own supply, often 24 V: tie that supply's return to the converter's ground at one point (or use an isolated loop receiver), and make sure a miswired loop cannot put its supply across the shunt and the amplifier input.".to_string());
    }
    let volts = req.source.kind.quantity() == Quantity::Voltage;
    if rails.total() > 30.0 || (volts && req.source.max.abs().max(req.source.min.abs()) > 30.0) {
        v.push("Voltages above 30 V are present; treat the circuit as hazardous when working on it.".to_string());
    }
    v
}
