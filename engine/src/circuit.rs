//! The one circuit model: parts, nodes, values, tolerances and the stage each part belongs to.
//!
//! Synthesis produces exactly one [`Circuit`]; the solver, the netlist, the part list and
//! every later output (schematic, analyses, report) are derived from it and never re-derive
//! values. Besides the parts that get soldered, the model holds the *bench* around them —
//! the sensor as an EMF behind its impedance, the supplies and the converter's input load —
//! marked `bench: true`, so that simulation and export see the same surroundings.
//!
//! Node names are stable and meaningful: `0` (ground), `emf` (the sensor's open-circuit
//! voltage), `sense` (the sensor terminal), `vpos`/`vneg` (rails), `adc` (the converter
//! input); stage-internal nodes are named by role (`inp1`, `inn1`, `ref`, …).
//!
//! When a filter or a converter drive follows the gain stage, the gain stage's output is
//! `out1`; filter section k has its junction `f{k}a`, its + input `f{k}p`, its − input
//! `f{k}n` (multiple feedback only) and its output `f{k}o`; inverting sections share the
//! reference `fref`; the drive's series resistor ends at `adc`. Whatever part comes last
//! in the chain drives `adc` (see [`crate::synth::chain`]).
//!
//! Every stage records what it is ([`StageKind`]) and every part synthesis builds records
//! what it is in its stage ([`PartRole`]): readers find a part by its role, never by its
//! node names or the words of its purpose (the names above are for scripts and people).

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};

mod role;
pub use role::{PartRole, Place, RailSide, SectionPart, Side, StageKind};

/// Ground node name.
pub const GND: &str = "0";

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PartKind {
    Resistor,
    Capacitor,
    /// An operational amplifier; nodes are `[in+, in−, v+, v−, out]`.
    OpAmp,
    /// An independent voltage source; nodes are `[+, −]`.
    VoltageSource,
    /// An independent current source; nodes are `[from, to]`: the current leaves node
    /// `from` through the source and enters node `to` (the SPICE3 `I` element's direction).
    CurrentSource,
    /// A clamp diode; nodes are `[anode, cathode]`, value its forward voltage (V). The
    /// solver treats it as open: it conducts only outside the converter's range.
    Diode,
}

impl PartKind {
    pub fn name(self) -> &'static str {
        match self {
            PartKind::Resistor => "resistor",
            PartKind::Capacitor => "capacitor",
            PartKind::OpAmp => "amplifier",
            PartKind::VoltageSource => "source",
            PartKind::CurrentSource => "current source",
            PartKind::Diode => "diode",
        }
    }
}

/// Designators of the bench sources that stand for the sensor's measured quantity.
pub const SENSOR_SOURCES: [&str; 2] = ["VSENSE", "ISENSE"];

/// True for the bench source that stands for the sensor (`VSENSE` or `ISENSE`).
pub fn is_sensor_source(p: &Part) -> bool {
    p.bench && SENSOR_SOURCES.contains(&p.reference.as_str())
}

/// Capacitors that set a corner above the band and so stay open at mid-band: the filter's,
/// the drive's, a transimpedance stage's C_f, and a sensor's capacitance to ground (a shunt,
/// as a photodiode's junction or an electrode's cable). Every other capacitor (coupling,
/// bypass, a sensor's series capacitance) is a short there.
pub fn open_at_mid_band(p: &Part) -> bool {
    p.kind == PartKind::Capacitor
        && (matches!(p.stage, StageRole::Filter | StageRole::Drive | StageRole::Transimpedance)
            || (p.bench && p.stage == StageRole::Sensor && p.nodes.iter().any(|n| n == GND)))
}

/// True for a supply decoupling capacitor (by its role; see [`PartRole::is_decoupling`]).
pub fn is_decoupling(p: &Part) -> bool {
    p.role.is_some_and(PartRole::is_decoupling)
}

/// What a part is for; the stage it belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StageRole {
    /// The sensor model (EMF and source impedance).
    Sensor,
    /// The supplies.
    Supply,
    /// The shunt that turns a loop current into a voltage.
    Shunt,
    /// The follower in front of a high-impedance sensor and its bias path.
    Buffer,
    /// A photodiode's transimpedance stage and its bias.
    Transimpedance,
    /// An instrumentation amplifier's input amplifiers, gain resistor and leg protection.
    InputStage,
    /// DC blocking and the bias that sets the DC level after it.
    Coupling,
    /// A reference voltage derived from a rail.
    Reference,
    /// Gain and level shift.
    Gain,
    /// The converter's input load.
    Converter,
    /// The anti-alias low-pass filter.
    Filter,
    /// The converter drive: charge-bucket capacitor, isolation resistor, input protection.
    Drive,
    /// Supply decoupling: local capacitors at the amplifiers' supply pins, bulk capacitors
    /// on the rails.
    Decoupling,
}

impl StageRole {
    pub fn name(self) -> &'static str {
        match self {
            StageRole::Sensor => "sensor",
            StageRole::Supply => "supply",
            StageRole::Shunt => "shunt",
            StageRole::Buffer => "buffer",
            StageRole::Transimpedance => "transimpedance",
            StageRole::InputStage => "input_stage",
            StageRole::Coupling => "coupling",
            StageRole::Reference => "reference",
            StageRole::Gain => "gain",
            StageRole::Converter => "converter",
            StageRole::Filter => "filter",
            StageRole::Drive => "drive",
            StageRole::Decoupling => "decoupling",
        }
    }
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Part {
    /// Reference designator: R1, C1, U1 … for parts to build; VSENSE, RSENSE, VPOS, VNEG,
    /// RADC for the bench around them.
    #[serde(rename = "ref")]
    pub reference: String,
    pub kind: PartKind,
    /// Value in SI base units (Ω, F, V); for an amplifier its GBW in Hz.
    pub value: f64,
    /// Relative tolerance (0.01 = ±1 %), `None` where it does not apply.
    pub tolerance: Option<f64>,
    pub nodes: Vec<String>,
    pub stage: StageRole,
    /// What the part is in its stage (or on the bench); `None` for parts built by hand
    /// outside synthesis.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub role: Option<PartRole>,
    /// What the part does, in a short phrase.
    pub purpose: String,
    /// Part of the bench (sensor, supplies, converter load), not something to build.
    pub bench: bool,
    /// A capacitor's technology, chosen on the built circuit (`design::capacitors`); `None`
    /// before that and for other parts.
    #[serde(skip)]
    pub dielectric: Option<crate::ratings::Dielectric>,
}

/// One stage of the design with its role in words.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Stage {
    pub role: StageRole,
    /// What the stage is (not in the design's JSON, which lists stages by `role`).
    #[serde(skip)]
    pub kind: StageKind,
    pub description: String,
    /// Designators of the parts in this stage, bench parts excluded.
    pub parts: Vec<String>,
}

/// The circuit model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Circuit {
    pub parts: Vec<Part>,
    pub stages: Vec<Stage>,
    /// The amplifier every `OpAmp` part uses.
    pub amplifier: Amplifier,
    /// Rails the amplifiers run from.
    pub rail_pos: f64,
    pub rail_neg: f64,
}

impl Circuit {
    /// Every node name, ground first, in order of first use.
    pub fn nodes(&self) -> Vec<String> {
        let mut out = vec![GND.to_string()];
        for p in &self.parts {
            for n in &p.nodes {
                if !out.contains(n) {
                    out.push(n.clone());
                }
            }
        }
        out
    }

    /// The bench source that stands for the sensor: `VSENSE` (voltage kinds) or `ISENSE`
    /// (current kinds). Analyses sweep it over `source.min … source.max`.
    pub fn sensor_source(&self) -> Option<&Part> {
        self.parts.iter().find(|p| is_sensor_source(p))
    }

    /// The rails the amplifiers run from.
    pub fn rails(&self) -> Rails {
        Rails { pos: self.rail_pos, neg: self.rail_neg }
    }

    /// Lowest and highest output the amplifiers reach on the circuit's rails.
    pub fn output_limits(&self) -> (f64, f64) {
        self.amplifier.output_limits(self.rails())
    }

    pub fn part(&self, reference: &str) -> Option<&Part> {
        self.parts.iter().find(|p| p.reference == reference)
    }

    /// The nodes where the sensor's bench model meets the circuit, from the bench's roles:
    /// the single-ended terminal (behind the source resistance, or where a loop's current or
    /// a photocurrent enters), then a pair's + and − terminals (behind each leg's impedance).
    pub fn sensor_terminals(&self) -> Vec<String> {
        let bench = |role: PartRole| self.parts.iter().find(|p| p.bench && p.role == Some(role));
        let beyond = |p: &Part, source: Option<&Part>| {
            p.nodes.iter().find(|n| source.is_none_or(|s| !s.nodes.contains(n))).cloned()
        };
        let single = match (bench(PartRole::SourceResistance), bench(PartRole::LoopCurrent)) {
            (Some(r), _) => beyond(r, bench(PartRole::Emf)),
            (None, Some(i)) => i.nodes.get(1).cloned(),
            (None, None) => bench(PartRole::Photocurrent).and_then(|i| i.nodes.first().cloned()),
        };
        let pair = [Side::Plus, Side::Minus]
            .map(|side| bench(PartRole::LegImpedance(side)).and_then(|r| beyond(r, bench(PartRole::DifferentialEmf))));
        let mut out: Vec<String> = Vec::new();
        for n in std::iter::once(single).chain(pair).flatten() {
            if !out.contains(&n) {
                out.push(n);
            }
        }
        out
    }

    /// The first part with role `role`.
    pub fn with_role(&self, role: PartRole) -> Option<&Part> {
        self.parts.iter().find(|p| p.role == Some(role))
    }

    /// The first part with role `role` in a stage of kind `kind`.
    pub fn stage_part(&self, kind: StageKind, role: PartRole) -> Option<&Part> {
        let in_kind = self.stages.iter().filter(|s| s.kind == kind);
        self.parts.iter().find(|p| p.role == Some(role) && in_kind.clone().any(|s| s.parts.contains(&p.reference)))
    }

    pub fn part_mut(&mut self, reference: &str) -> Option<&mut Part> {
        self.parts.iter_mut().find(|p| p.reference == reference)
    }

    /// Parts to build (the bench excluded), in designator order.
    pub fn build_parts(&self) -> Vec<&Part> {
        let mut v: Vec<&Part> = self.parts.iter().filter(|p| !p.bench).collect();
        crate::order::sort_by(&mut v, |a, b| designator_key(&a.reference).cmp(&designator_key(&b.reference)));
        v
    }
}

/// Sort key so that R2 comes before R10.
pub fn designator_key(d: &str) -> (String, u64) {
    let split = d.find(|c: char| c.is_ascii_digit()).unwrap_or(d.len());
    let (prefix, num) = d.split_at(split);
    (prefix.to_string(), num.parse().unwrap_or(0))
}

/// A divided level for [`Builder::divider`]: legs `top` (from `from` to `tap`) and `bottom`
/// (`tap` to ground) in stage `stage`, an optional bypass (value, purpose).
pub struct Divider<'a> {
    pub from: &'a str,
    pub tap: &'a str,
    pub top: f64,
    pub bottom: f64,
    pub bypass: Option<(f64, &'a str)>,
    pub stage: StageRole,
    pub what: &'a str,
}

/// Builds a circuit part by part, numbering designators per letter.
#[derive(Debug, Default)]
pub struct Builder {
    pub parts: Vec<Part>,
    counters: Vec<(char, u32)>,
}

impl Builder {
    /// A builder that continues the designators of `parts` (R4 after R3 …).
    pub fn resume(parts: Vec<Part>) -> Builder {
        let mut counters: Vec<(char, u32)> = Vec::new();
        for p in parts.iter().filter(|p| !p.bench) {
            let (prefix, n) = designator_key(&p.reference);
            let mut chars = prefix.chars();
            let (Some(letter), None) = (chars.next(), chars.next()) else { continue };
            match counters.iter_mut().find(|(c, _)| *c == letter) {
                Some((_, m)) => *m = (*m).max(n as u32),
                None => counters.push((letter, n as u32)),
            }
        }
        Builder { parts, counters }
    }

    fn next(&mut self, letter: char) -> String {
        let n = match self.counters.iter_mut().find(|(c, _)| *c == letter) {
            Some((_, n)) => {
                *n += 1;
                *n
            }
            None => {
                self.counters.push((letter, 1));
                1
            }
        };
        format!("{letter}{n}")
    }

    /// Adds a level taken from a rail: a divider `from` → `tap` → ground (upper and lower legs
    /// named "`what`, upper leg" and "`what`, lower leg") and, when `bypass` is given, a
    /// capacitor from `tap` to ground; the one way synthesis builds a divided level.
    pub fn divider(&mut self, d: &Divider, rtol: Option<f64>, ctol: Option<f64>) -> Vec<String> {
        let mut parts = vec![
            self.add(
                PartKind::Resistor,
                d.top,
                rtol,
                &[d.from, d.tap],
                (d.stage, PartRole::DividerTop),
                &format!("{}, upper leg", d.what),
            ),
            self.add(
                PartKind::Resistor,
                d.bottom,
                rtol,
                &[d.tap, GND],
                (d.stage, PartRole::DividerBottom),
                &format!("{}, lower leg", d.what),
            ),
        ];
        if let Some((c, purpose)) = d.bypass {
            parts.push(self.add(PartKind::Capacitor, c, ctol, &[d.tap, GND], (d.stage, PartRole::Bypass), purpose));
        }
        parts
    }

    /// Adds a part to build and returns its designator; `at` is its stage, with its role
    /// there when synthesis builds it (`(StageRole::Gain, PartRole::FeedbackResistor)`).
    pub fn add(
        &mut self, kind: PartKind, value: f64, tolerance: Option<f64>, nodes: &[&str], at: impl Into<Place>,
        purpose: &str,
    ) -> String {
        let at = at.into();
        let letter = match kind {
            PartKind::Resistor => 'R',
            PartKind::Capacitor => 'C',
            PartKind::OpAmp => 'U',
            PartKind::VoltageSource => 'V',
            PartKind::CurrentSource => 'I',
            PartKind::Diode => 'D',
        };
        let reference = self.next(letter);
        self.parts.push(Part {
            reference: reference.clone(),
            kind,
            value,
            tolerance,
            nodes: nodes.iter().map(|s| s.to_string()).collect(),
            stage: at.stage,
            role: at.role,
            purpose: purpose.to_string(),
            bench: false,
            dielectric: None,
        });
        reference
    }

    /// Adds a front end's amplifier under a designator freed for it (U1, U2 after
    /// `synth::renumber_amplifiers`): nodes +, −, V+, V−, output; its value is the GBW.
    pub fn front_amplifier(
        &mut self, designator: &str, gbw: f64, nodes: [&str; 5], at: impl Into<Place>, purpose: &str,
    ) -> String {
        let at = at.into();
        self.parts.push(Part {
            reference: designator.to_string(),
            kind: PartKind::OpAmp,
            value: gbw,
            tolerance: None,
            nodes: nodes.iter().map(|s| s.to_string()).collect(),
            stage: at.stage,
            role: at.role,
            purpose: purpose.to_string(),
            bench: false,
            dielectric: None,
        });
        designator.to_string()
    }

    /// Adds a bench part with a fixed name (VSENSE, RSENSE, VPOS, VNEG, RADC).
    pub fn bench(
        &mut self, reference: &str, kind: PartKind, value: f64, nodes: &[&str], at: impl Into<Place>, purpose: &str,
    ) {
        let at = at.into();
        self.parts.push(Part {
            reference: reference.to_string(),
            kind,
            value,
            tolerance: None,
            nodes: nodes.iter().map(|s| s.to_string()).collect(),
            stage: at.stage,
            role: at.role,
            purpose: purpose.to_string(),
            bench: true,
            dielectric: None,
        });
    }
}
