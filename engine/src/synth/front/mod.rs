//! Front ends: what stands between the sensor and the gain stage, one module each behind
//! one interface ([`Steps`]) and chosen by one enum ([`FrontEnd`]).
//!
//! Every front end takes the same steps, in this order, and the design pipeline calls them
//! without knowing which front end it holds:
//! 1. **plan** ([`FrontEnd::plan`], the only place that looks at the sensor's kind): its
//!    parts and figures from the request;
//! 2. **equivalent**: the sensor the gain stage is synthesised for (a loop's shunt voltage,
//!    a follower's or transimpedance stage's output as a stiff source, a bridge's Thévenin
//!    pair, an instrumentation amplifier's first-stage outputs);
//! 3. **insert**: the front end built into the synthesised circuit, the bench turned back
//!    into the sensor's own model;
//! 4. **equations**, **checks** (after the whole circuit is predicted again) and, once the
//!    analyses ran, the checks that need them ([`Steps::analysed`]);
//! 5. **figures**: its rows for the report, the app and the JSON ([`crate::figures`]).
//!
//! A single-ended voltage sensor has no front end: the gain stage meets it directly, unless
//! one stage cannot give its gain ([`preamp`]: a first gain stage in front).

pub mod bridge;
pub mod current_loop;
pub mod difference;
pub mod follower;
pub mod instrumentation;
pub mod preamp;
pub mod transimpedance;

use serde::ser::{Serialize, SerializeMap, Serializer};

use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Circuit, PartKind, PartRole};
use crate::diag::Check;
use crate::figures::Block;
use crate::predict::Predicted;
use crate::request::{Coupling, Request, SourceKind};
use crate::units::{format, Quantity};

use bridge::BridgeDesign;
use current_loop::LoopDesign;
use difference::DiffDesign;
use follower::BufferDesign;
use instrumentation::InampDesign;
use transimpedance::TiaDesign;

/// What every step may read: the request as given, the assumed amplifier and the rails.
#[derive(Debug, Clone, Copy)]
pub struct Context<'a> {
    pub req: &'a Request,
    pub amp: &'a Amplifier,
    pub rails: Rails,
}

/// What a front end's own amplifiers ask beyond the gain stage's needs (the amplifier
/// requirements widen by it).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Needs {
    pub output_range: (f64, f64),
    pub input_range: (f64, f64),
    pub gbw: f64,
    /// The front end's gain, V/V (named in the requirement's words).
    pub gain: f64,
    /// The requirement's words before the gain: which stage, the rule's factor.
    pub rule: &'static str,
}

/// The steps every front end takes (see the module documentation).
pub trait Steps {
    /// The sensor the gain stage is synthesised for.
    fn equivalent(&self, ctx: &Context) -> Request;
    /// Checks of the front end's own that need no circuit.
    fn early_checks(&self, _ctx: &Context) -> Vec<Check> {
        Vec::new()
    }
    /// Ids of the gain stage's checks that this front end answers instead.
    fn supersedes(&self) -> &'static [&'static str] {
        &[]
    }
    /// Builds the front end into the circuit synthesised for [`Steps::equivalent`].
    fn insert(&mut self, circuit: &mut Circuit, ctx: &Context);
    /// The whole design's topology in words, given the gain stage's.
    fn topology(&self, gain_stage: &str) -> String {
        gain_stage.to_string()
    }
    /// Its design equations with the numbers substituted (they come first in the design's).
    fn equations(&self, ctx: &Context) -> Vec<String>;
    /// Its checks on the whole circuit and its prediction.
    fn checks(&mut self, circuit: &Circuit, p: &Predicted, ctx: &Context) -> Vec<Check>;
    /// Checks that need the analyses: `cmrr` = (builds, the CMRR 99.9 % of them exceed, dB).
    fn analysed(&mut self, _cmrr: Option<(usize, f64)>, _ctx: &Context) -> Vec<Check> {
        Vec::new()
    }
    /// What its own amplifiers need beyond the gain stage.
    fn needs(&self) -> Option<Needs> {
        None
    }
    /// The title of the report section its figures go under.
    fn section(&self) -> &'static str {
        "Sensor front end"
    }
    /// Its figures.
    fn figures(&self, ctx: &Context) -> Vec<Block>;
}

/// The front end a request gets.
#[derive(Debug, Clone, PartialEq)]
pub enum FrontEnd {
    /// A current loop's shunt.
    Loop(LoopDesign),
    /// A high-impedance sensor's follower.
    Follower(BufferDesign),
    /// A photodiode's transimpedance stage.
    Transimpedance(TiaDesign),
    /// A differential pair or a bridge straight into a difference amplifier.
    Difference(difference::Difference),
    /// A differential pair or a bridge behind an instrumentation amplifier's first stage.
    Instrumentation(instrumentation::Instrumentation),
    /// A first gain stage in front of the gain stage, when one stage cannot give the gain.
    Preamp(preamp::PreampDesign),
}

impl FrontEnd {
    /// The front end for `req` (`None` for a single-ended voltage sensor), or the error
    /// check that says why none can be built.
    pub fn plan(req: &Request, amp: &Amplifier, rails: Rails) -> Result<Option<FrontEnd>, Check> {
        Ok(match req.source.kind {
            SourceKind::SingleEnded => None,
            SourceKind::CurrentLoop => current_loop::plan(req).transpose()?.map(FrontEnd::Loop),
            SourceKind::HighImpedance => follower::plan(req, amp, rails).map(FrontEnd::Follower),
            SourceKind::Photodiode => transimpedance::plan(req, amp, rails).map(FrontEnd::Transimpedance),
            SourceKind::Differential | SourceKind::Bridge => Some(instrumentation::plan_pair(req, amp, rails)),
        })
    }

    /// Its steps.
    pub fn steps(&self) -> &dyn Steps {
        match self {
            FrontEnd::Loop(x) => x,
            FrontEnd::Follower(x) => x,
            FrontEnd::Transimpedance(x) => x,
            FrontEnd::Difference(x) => x,
            FrontEnd::Instrumentation(x) => x,
            FrontEnd::Preamp(x) => x,
        }
    }

    /// Its steps, for the ones that record what they find.
    pub fn steps_mut(&mut self) -> &mut dyn Steps {
        match self {
            FrontEnd::Loop(x) => x,
            FrontEnd::Follower(x) => x,
            FrontEnd::Transimpedance(x) => x,
            FrontEnd::Difference(x) => x,
            FrontEnd::Instrumentation(x) => x,
            FrontEnd::Preamp(x) => x,
        }
    }

    pub fn current_loop(&self) -> Option<&LoopDesign> {
        match self {
            FrontEnd::Loop(l) => Some(l),
            _ => None,
        }
    }

    pub fn high_impedance(&self) -> Option<&BufferDesign> {
        match self {
            FrontEnd::Follower(b) => Some(b),
            _ => None,
        }
    }

    pub fn photodiode(&self) -> Option<&TiaDesign> {
        match self {
            FrontEnd::Transimpedance(t) => Some(t),
            _ => None,
        }
    }

    /// The difference stage (alone, or after an instrumentation amplifier's first stage).
    pub fn differential(&self) -> Option<&DiffDesign> {
        self.pair().and_then(|d| d.design.as_ref())
    }

    pub fn bridge(&self) -> Option<&BridgeDesign> {
        self.pair().and_then(|d| d.bridge.as_ref())
    }

    pub fn instrumentation(&self) -> Option<&InampDesign> {
        match self {
            FrontEnd::Instrumentation(i) => Some(&i.first),
            _ => None,
        }
    }

    fn pair(&self) -> Option<&difference::Difference> {
        match self {
            FrontEnd::Difference(d) => Some(d),
            FrontEnd::Instrumentation(i) => Some(&i.diff),
            _ => None,
        }
    }
}

/// The design output holds each front end under its own key(s): `current_loop`,
/// `high_impedance`, `photodiode`, `differential` (+ `bridge`), `instrumentation` and `two_stage`.
impl Serialize for FrontEnd {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(None)?;
        match self {
            FrontEnd::Loop(l) => m.serialize_entry("current_loop", l)?,
            FrontEnd::Follower(b) => m.serialize_entry("high_impedance", b)?,
            FrontEnd::Transimpedance(t) => m.serialize_entry("photodiode", t)?,
            FrontEnd::Preamp(p) => m.serialize_entry("two_stage", p)?,
            FrontEnd::Difference(_) | FrontEnd::Instrumentation(_) => {
                if let Some(d) = self.differential() {
                    m.serialize_entry("differential", d)?;
                }
                if let Some(b) = self.bridge() {
                    m.serialize_entry("bridge", b)?;
                }
                if let Some(i) = self.instrumentation() {
                    m.serialize_entry("instrumentation", i)?;
                }
            }
        }
        m.end()
    }
}

/// `req` with its sensor replaced by a stiff single-ended DC source spanning `min … max`:
/// what a front end's output presents to the gain stage.
pub(crate) fn stiff_source(req: &Request, min: f64, max: f64) -> Request {
    let mut eq = req.clone();
    let s = &mut eq.source;
    s.kind = SourceKind::SingleEnded;
    s.coupling = Coupling::Dc;
    (s.min, s.max) = (min, max);
    s.impedance = 0.0;
    s.band_low = 0.0;
    s.capacitance = None;
    s.dark_current = None;
    s.measurand = None;
    eq
}

/// Prepares a circuit synthesised for an equivalent stiff source to get a front-end
/// amplifier as U1 (follower, transimpedance stage): drops the bench's EMF and source
/// resistance (`VSENSE`, `RSENSE`), moves every amplifier's designator up by one (in the
/// parts and the stages), and moves the gain stage's input from the sensor terminal (and
/// the EMF's node) to `input`, the front end's output.
pub(crate) fn make_room_in_front(circuit: &mut Circuit, input: &str) {
    let mut old = circuit.sensor_terminals();
    old.extend(circuit.with_role(PartRole::Emf).and_then(|p| p.nodes.first()).cloned());
    circuit.parts.retain(|p| !(p.bench && matches!(p.role, Some(PartRole::Emf | PartRole::SourceResistance))));
    renumber_amplifiers(circuit, 1);
    for p in circuit.parts.iter_mut().filter(|p| !p.bench) {
        for n in p.nodes.iter_mut().filter(|n| old.contains(n)) {
            *n = input.to_string();
        }
    }
}

/// Moves every amplifier's designator up by `by` (in the parts and the stages), freeing
/// U1 … U`by` for amplifiers put in front.
pub(crate) fn renumber_amplifiers(circuit: &mut Circuit, by: u32) {
    let renumber = |d: &str| match d.strip_prefix('U').and_then(|n| n.parse::<u32>().ok()) {
        Some(n) => format!("U{}", n + by),
        None => d.to_string(),
    };
    for p in circuit.parts.iter_mut().filter(|p| !p.bench && p.kind == PartKind::OpAmp) {
        p.reference = renumber(&p.reference);
    }
    for st in circuit.stages.iter_mut() {
        for d in st.parts.iter_mut() {
            *d = renumber(d);
        }
    }
}

/// The sensor side: when the sensor's range reaches beyond the rails, how much fault
/// voltage the resistance between the sensor and the amplifier inputs tolerates: the
/// injection current limited (the amplifier's datasheet governs its input current) and the
/// resistor within what the least standard part takes ([`crate::ratings::fault_across`] at
/// 63 mW, which every part the part list names meets: the claim drops to what the part
/// takes, it never raises the rating).
pub fn input_protection(req: &Request, c: &Circuit, rails: Rails) -> Vec<Check> {
    let v = |x: f64| format(x, Quantity::Voltage);
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
    let drop = crate::synth::drive::CLAMP_DROP;
    let beyond = hi > rails.pos + drop || lo < rails.neg - drop;
    if !beyond {
        return Vec::new();
    }
    let inputs = c.sensor_terminals();
    let on_input = |n: &String| inputs.contains(n);
    let direct = c.parts.iter().any(|p| p.kind == PartKind::OpAmp && p.nodes.iter().take(2).any(on_input));
    let limit = req.destination.injection_limit;
    let (lo, hi, neg, pos) = (v(lo), v(hi), v(rails.neg), v(rails.pos));
    let Some(f) = series_fault(req, c, &inputs).filter(|_| !direct) else {
        return vec![Check::warning(
            "input_protection",
            format!(
                "The sensor reaches {lo} … {hi}, beyond the rails {neg} … {pos}, and meets an amplifier input with no \
                 series resistor; add one of at least (excess − 0.3 V)/{} in front of it.",
                format(limit, Quantity::Current)
            ),
        )];
    };
    vec![Check::ok(
        "input_protection",
        format!(
            "The sensor reaches {lo} … {hi}, beyond the rails {neg} … {pos}; the input network keeps the amplifier's \
             inputs inside them over that range. {}",
            f.text(limit)
        ),
    )]
}

/// The fault a series resistor at a sensor terminal tolerates (see [`series_fault`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SeriesFault {
    /// The resistor, Ω, and the rating the claim assumes (the least standard one), W.
    pub resistance: f64,
    pub rating: f64,
    /// How far beyond a rail the terminal may go, V, and the power the resistor then takes, W.
    pub beyond_rail: f64,
    pub power: f64,
}

/// Of the resistors in series from `terminals` (not to ground), the one that tolerates the least
/// fault beyond a rail: its voltage at most R·I_limit and at most what a part of the least
/// standard rating takes.
pub fn series_fault(req: &Request, c: &Circuit, terminals: &[String]) -> Option<SeriesFault> {
    let limit = req.destination.injection_limit;
    c.parts
        .iter()
        .filter(|p| p.kind == PartKind::Resistor && !p.bench && !p.nodes.iter().any(|n| n == crate::circuit::GND))
        .filter(|p| p.nodes.iter().any(|n| terminals.contains(n)))
        .map(|p| {
            let rating = crate::ratings::POWER_RATINGS[0];
            let across = (p.value * limit).min(crate::ratings::fault_across(p.value, rating));
            let beyond_rail = across + crate::synth::drive::CLAMP_DROP;
            SeriesFault { resistance: p.value, rating, beyond_rail, power: across * across / p.value }
        })
        .min_by(|a, b| a.beyond_rail.total_cmp(&b.beyond_rail))
}

impl SeriesFault {
    /// The claim in words, with its numbers.
    pub fn text(&self, limit: f64) -> String {
        let w = |x: f64| format(x, Quantity::Power);
        let high = if self.beyond_rail > crate::ratings::EXTRA_LOW_VOLTAGE {
            " Mains-referenced sensors need isolation; data sheets and local codes govern."
        } else {
            ""
        };
        format!(
            "A fault up to {} beyond a rail keeps under {} in the input's protection (its datasheet governs) and {} \
             in the {} series resistor, rated {} or more; a larger fault needs a larger part.{high}",
            format(self.beyond_rail, Quantity::Voltage),
            format(limit, Quantity::Current),
            w(self.power),
            format(self.resistance, Quantity::Resistance),
            w(self.rating)
        )
    }
}
