//! The design: runs the pipeline for one request and gathers the result and its checks.
//!
//! The pipeline reads target → synthesise → predict → check → analyse, the same for every
//! sensor: the sensor's front end ([`crate::synth::front::FrontEnd`]) gives the sensor the
//! gain stage is synthesised for, is built into the rounded circuit, and adds its own
//! equations, checks and figures through one interface.
//!
//! [`design`] never fails: a request that cannot be built comes back with error checks that
//! say why and what would make it possible, and with whatever could still be computed.
//! `predicted` comes from the MNA solver on the rounded circuit with the finite-gain,
//! finite-bandwidth amplifier model — the same model the netlist exports — so it agrees with
//! a SPICE3 simulation of that netlist.

pub mod capacitors;
mod checks;
pub mod requirements;

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::analysis::{analyse, Analysis, AnalysisConfig, Nominal};
use crate::circuit::{Circuit, Part, PartKind, Stage};
use crate::diag::{has_error, Check};
use crate::figures::Block;
use crate::request::{Coupling, Request};
use crate::synth::front::{Context, FrontEnd};
use crate::synth::{self, Target};
use crate::units::{format, Quantity};

pub use crate::predict::{predict, Predicted};
pub use requirements::{noise_gain, Requirements, GBW_MARGIN};

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
    /// The sensor's front end (a loop's shunt, a follower, a transimpedance stage, a
    /// difference or instrumentation amplifier), under its own keys in the output.
    #[serde(flatten)]
    pub front: Option<FrontEnd>,
    /// The figures of the front end, the filter and the drive, as every output shows them.
    pub figures: Figures,
    /// The circuit model every output derives from (absent when synthesis was impossible).
    #[serde(skip)]
    pub circuit: Option<Circuit>,
}

/// The design's figures in blocks of rows, produced once (see [`crate::figures`]).
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Figures {
    /// The report section the front end's blocks go under.
    pub front_section: String,
    pub front: Vec<Block>,
    /// The anti-alias filter's sections and the converter pin.
    pub chain: Vec<Block>,
}

impl Design {
    /// A current loop's shunt.
    pub fn current_loop(&self) -> Option<&crate::synth::front::current_loop::LoopDesign> {
        self.front.as_ref()?.current_loop()
    }

    /// A high-impedance sensor's follower.
    pub fn high_impedance(&self) -> Option<&crate::synth::front::follower::BufferDesign> {
        self.front.as_ref()?.high_impedance()
    }

    /// A photodiode's transimpedance stage.
    pub fn photodiode(&self) -> Option<&crate::synth::front::transimpedance::TiaDesign> {
        self.front.as_ref()?.photodiode()
    }

    /// The difference amplifier (alone, or as an instrumentation amplifier's second stage).
    pub fn differential(&self) -> Option<&crate::synth::front::difference::DiffDesign> {
        self.front.as_ref()?.differential()
    }

    /// A bridge's own figures.
    pub fn bridge(&self) -> Option<&crate::synth::front::bridge::BridgeDesign> {
        self.front.as_ref()?.bridge()
    }

    /// An instrumentation amplifier's first stage.
    pub fn instrumentation(&self) -> Option<&crate::synth::front::instrumentation::InampDesign> {
        self.front.as_ref()?.instrumentation()
    }
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
    let ctx = Context { req, amp: &amp, rails };
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
        cautions: checks::cautions(req, rails),
        scaling: None,
        filter: None,
        drive: None,
        front: None,
        figures: Figures::default(),
        circuit: None,
    };
    // The front end turns the sensor into the one the gain stage is synthesised for (`syn`);
    // the analyses use the request itself.
    let (mut front, front_error) = match FrontEnd::plan(req, &amp, rails) {
        Ok(f) => (f, None),
        Err(check) => (None, Some(check)),
    };
    let syn = front.as_ref().map_or_else(|| req.clone(), |f| f.steps().equivalent(&ctx));
    let syn = &syn;
    let mut checks = checks::feasibility(syn, rails, &amp);
    checks.extend(front_error);
    if let Some(f) = &front {
        checks.extend(f.steps().early_checks(&ctx));
    }
    if has_error(&checks) {
        return finish_early(out, front, checks, &ctx);
    }
    let Some(target) = synth::target(syn, &amp, rails, &mut checks) else {
        return finish_early(out, front, checks, &ctx);
    };
    let mut found = synthesise(syn, &amp, rails, target);
    // One stage that cannot give the gain (no realisation, or too little GBW): two stages.
    let short = |x: &(synth::Synthesis, Predicted)| GBW_MARGIN * noise_gain(&x.0.circuit) * req.source.band_high;
    let why = match &found {
        None => Some(format!(
            "One stage from {:?} parts reaches no gain of {}",
            req.parts.resistor_series,
            sig3(target.gain)
        )),
        Some(x) if front.is_none() && short(x) > amp.gbw => {
            Some(format!("One stage of gain {} needs {} of gain-bandwidth", sig3(target.gain), hz(short(x))))
        }
        Some(_) => None,
    };
    let mut two = Err("no second stage is built behind this sensor's front end".to_string());
    if let (None, Some(why)) = (&front, &why) {
        let second = |eq: &Request| synthesise(eq, &amp, rails, synth::target(eq, &amp, rails, &mut Vec::new())?);
        two = synth::front::preamp::plan(&ctx, target.gain, why, second);
    }
    let eq;
    let syn = match two {
        Ok((pre, s2, p2)) => {
            eq = synth::front::Steps::equivalent(&pre, &ctx);
            (found, front) = (Some((s2, p2)), Some(FrontEnd::Preamp(pre)));
            &eq
        }
        Err(two) => {
            if found.is_none() {
                let (lo, hi) = (req.parts.resistor_min, req.parts.resistor_max);
                checks.push(Check::error(
                    "no_realisation",
                    format!(
                        "The mapping asks a gain of {}; one stage from {:?} parts in {} … {} reaches at most about {} \
                         (1 + R_max/R_min); {two}. Widen parts.resistor_min … resistor_max, or narrow the converter \
                         range.",
                        sig3(target.gain),
                        req.parts.resistor_series,
                        format(lo, Quantity::Resistance),
                        format(hi, Quantity::Resistance),
                        sig3(1.0 + hi / lo),
                    ),
                ));
                return finish_early(out, front, checks, &ctx);
            }
            syn
        }
    };
    let Some((mut s, mut p)) = found else {
        return unsolved(out, checks);
    };
    // Checks of the gain stage in the synthesis view (volts at `sense`).
    let mut req_amp = requirements::requirements(syn, &s, &amp, rails);
    checks.extend(checks::design_checks(syn, &s, &p, &amp, rails, &req_amp));
    if let Some(f) = front.as_mut() {
        let steps = f.steps_mut();
        checks.retain(|c| !steps.supersedes().contains(&c.id.as_str()));
        steps.insert(&mut s.circuit, &ctx);
        s.topology = steps.topology(&s.topology);
        let mut eqs = steps.equations(&ctx);
        eqs.append(&mut s.equations);
        s.equations = eqs;
        let Some(q) = predict(req, &s.circuit) else {
            return unsolved(out, checks);
        };
        p = q;
        checks.extend(steps.checks(&s.circuit, &p, &ctx));
        if let Some(n) = steps.needs() {
            requirements::widen(&mut req_amp, &n, rails, req.source.band_high);
        }
    }
    // Every amplifier is placed: its supply pins get their decoupling (no signal figure moves).
    synth::decouple::decouple(&mut s.circuit);
    checks.extend(capacitors::choose(&mut s.circuit, req, &capacitors::CapacitorConfig::default()));
    let nominal = Nominal { gain: p.gain, f_low_3db: p.band_low, f_high_3db: p.band_high };
    let (analysis, analysis_checks) = analyse(req, &s.circuit, nominal, cfg);
    checks.extend(analysis_checks);
    if let Some(b) = &analysis.tolerance.budget {
        requirements::from_budget(&mut req_amp, b);
    }
    let edge_db = analysis.ac.gain_band_high_db - analysis.ac.gain_mid_db;
    if let Some(retry) = leave_room_for_the_chain(req, &s, edge_db) {
        return design_with(&retry, cfg);
    }
    checks.extend(synth::chain::filter_checks(req, &s, analysis.alias.map(|a| a.achieved_db), Some(edge_db)));
    if let Some(f) = front.as_mut() {
        checks.extend(f.steps_mut().analysed(analysis.cmrr.map(|c| (c.runs, c.p001_db)), &ctx));
    }
    out.figures.chain = synth::chain::figures(&s, analysis.alias.as_ref().map(|a| (a.required_db, a.achieved_db)));
    out.scaling = crate::scaling::scaling(req, &p, Some(&analysis));
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
    out.requirements = Some(req_amp);
    crate::order::sort_by(&mut checks, |a, b| b.severity.cmp(&a.severity));
    out.checks = checks;
    out.circuit = Some(s.circuit);
    set_front(&mut out, front, &ctx);
    out
}

/// Synthesises the gain stage for `syn` and its target and predicts it; rounding and the
/// amplifier's finite gain can move the extremes by a hair past the headroom, so the target
/// is pulled in by that much and the stage designed again (a few times at most). The
/// attempt that misses least is kept.
fn synthesise(
    syn: &Request, amp: &Amplifier, rails: Rails, mut target: Target,
) -> Option<(synth::Synthesis, Predicted)> {
    let d = &syn.destination;
    let span = d.max - d.min;
    // Inside the headroom and inside the amplifier's swing (half the synthesis margin): a
    // rounded stage whose extreme lands on the swing limit clips there.
    let (out_lo, out_hi) = amp.output_limits(rails);
    let margin = 0.5 * synth::SWING_MARGIN;
    let band_lo = (d.min + d.headroom * span).max(out_lo + margin);
    let band_hi = (d.max - d.headroom * span).min(out_hi - margin);
    let mut result = None;
    // The filter and the drive do not depend on the gain stage: plan them once.
    let chain = synth::chain::plan(syn, amp, rails);
    // An extreme held at the swing limit hides how far past it the stage would go, so a
    // later, larger pull can be the one that fits.
    let mut best = f64::INFINITY;
    for nudge in NUDGES {
        let Some(s) = synth::synthesize_with_chain(syn, amp, rails, target, &chain) else {
            break;
        };
        let Some(p) = predict(syn, &s.circuit) else {
            break;
        };
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
        let pull = |miss: f64| if miss > 0.0 { miss + nudge * span } else { 0.0 };
        target = shrink(target, syn, pull(under), pull(over));
    }
    result
}

/// The front end's figures and output keys, once it has done its steps.
fn set_front(out: &mut Design, front: Option<FrontEnd>, ctx: &Context) {
    if let Some(f) = &front {
        out.figures.front_section = f.steps().section().to_string();
        out.figures.front = f.steps().figures(ctx);
    }
    out.front = front;
}

/// A design that stops before a circuit exists: its checks, and what the front end knows.
fn finish_early(mut out: Design, front: Option<FrontEnd>, checks: Vec<Check>, ctx: &Context) -> Design {
    out.checks = checks;
    set_front(&mut out, front, ctx);
    out
}

/// The design of a circuit that does not solve once its front end is in: an error check.
fn unsolved(mut out: Design, mut checks: Vec<Check>) -> Design {
    checks.push(Check::error(
        "no_realisation",
        "The circuit with its sensor's front end does not solve; this is a fault in Rangefit, please report the \
            request.",
    ));
    out.checks = checks;
    out
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

/// When the built chain misses the in-band error at `band_high` although the filter alone
/// meets it, the request again with the filter designed for what the rest of the chain
/// leaves (once: a request that already reserves a share is not retried).
fn leave_room_for_the_chain(req: &Request, s: &synth::Synthesis, edge_db: f64) -> Option<Request> {
    let f = s.filter.as_ref()?;
    let rest = edge_db.abs() - f.passband_error_db;
    let beyond = edge_db.abs() > f.passband_allowed_db + 0.005;
    if req.filter.chain_droop_db > 0.0 || !beyond || rest <= 0.0 || rest + 0.01 >= f.passband_allowed_db {
        return None;
    }
    let mut r = req.clone();
    // A hundredth of a dB more than measured: rounding the new filter moves its own share.
    r.filter.chain_droop_db = rest + 0.01;
    Some(r)
}

/// A voltage as every message shows it.
fn v(x: f64) -> String {
    format(x, Quantity::Voltage)
}

/// A plain number with three significant digits.
fn sig3(x: f64) -> String {
    format(x, Quantity::Ratio)
}

/// A frequency as every message shows it.
fn hz(x: f64) -> String {
    format(x, Quantity::Frequency)
}
