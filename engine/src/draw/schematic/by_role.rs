//! The blocks of a synthesised circuit, read from the stage kinds and part roles it carries
//! ([`crate::circuit::StageKind`], [`crate::circuit::PartRole`]): which part is the
//! follower's bias resistor, which two are a difference amplifier's input resistors, which
//! capacitor is a section's C_g. Node names are only followed to orient a part (which of its
//! ends is on the line drawn so far); no part is recognised by its nodes or its purpose.
//!
//! When a stage the model lists cannot be assembled from its roles (a part removed or
//! rewired after synthesis), [`blocks`] gives up and the drawing falls back to
//! [`super::by_shape`] for the whole circuit, so an altered circuit draws as it did before
//! roles existed.

mod gain;

use super::blocks::{Blocks, Diode, HighZ, Mode, Plain, Sensor};
use super::buffer::Buffer;
use super::diff::{Diff, Pair, Stage};
use super::inamp::{self, Inamp};
use super::plan::{has, other, Rail, Step};
use super::tia::Tia;
use crate::circuit::{Circuit, PartRole, Side, StageKind, GND};
use gain::{chain, plan};

use PartRole as R;

/// Every block of `c` from its roles; `None` when it carries none or a stage it lists is
/// not whole.
pub(super) fn blocks(c: &Circuit) -> Option<Blocks> {
    if c.stages.is_empty() || c.parts.iter().all(|p| p.role.is_none()) {
        return None;
    }
    let r = Roles::new(c);
    let rails: Vec<Rail> = (0..c.parts.len())
        .filter(|&i| c.parts[i].role == Some(R::Rail) && c.parts[i].nodes.len() == 2)
        .map(|i| {
            let p = &c.parts[i];
            Rail { node: p.nodes[0].clone(), name: p.reference.clone(), volts: p.value, part: i }
        })
        .collect();
    let terminal = |n: &str| n == GND || rails.iter().any(|x| x.node == n);
    let listed = |k: StageKind| c.stages.iter().any(|s| s.kind == k);
    let buffer = if listed(StageKind::Follower) { Some(buffer(&r, &terminal)?) } else { None };
    let tia = if listed(StageKind::Transimpedance) { Some(tia(&r)?) } else { None };
    let inamp = if listed(StageKind::InstrumentationInput) { Some(inamp(&r, &terminal)?) } else { None };
    let diff = match inamp {
        None if listed(StageKind::Difference) => {
            let pair = pair(&r)?;
            let stage = stage(&r, &terminal, &pair.term)?;
            Some(Diff { pair, stage })
        }
        _ => None,
    };
    let sensor = sensor(&r, &terminal);
    let term = match &sensor {
        Sensor::HighImpedance(h) => h.term.clone(),
        Sensor::Photodiode(d) => d.term.clone(),
        Sensor::Plain(p) => p.term.clone(),
    };
    let (start, _) = Blocks::start(buffer.as_ref(), tia.as_ref(), &term);
    // The first of two gain stages, between the sensor and the gain stage.
    let pre = match listed(StageKind::FirstGain) {
        true => Some(plan(&r, &terminal, &start, true)).filter(|p| p.amp.is_some() && p.connected),
        false => None,
    };
    if listed(StageKind::FirstGain) && pre.is_none() {
        return None;
    }
    let start = pre.as_ref().map_or(start, |p| p.out.clone());
    let plan = match (&inamp, &diff) {
        (None, None) => {
            let plan = plan(&r, &terminal, &start, false);
            let gain = c.stages.iter().any(|s| matches!(s.kind, StageKind::Gain { .. }));
            if gain && plan.amp.is_none() {
                return None;
            }
            Some(plan)
        }
        _ => None,
    };
    let load = r.bench(R::ConverterLoad);
    let pin = load.map(|i| other(&c.parts[i], GND));
    let from = match (&inamp, &diff, &plan) {
        (Some(a), _, _) => a.stage.out.clone(),
        (None, Some(d), _) => d.stage.out.clone(),
        (None, None, p) => p.as_ref().map(|p| p.out.clone()).unwrap_or_default(),
    };
    let chain = chain(&r, &terminal, &from, pin.clone())?;
    Some(Blocks {
        mode: Mode::Roles,
        rails,
        sensor,
        emf: r.bench(R::Emf).and_then(|i| c.parts[i].nodes.first().cloned()),
        pin: pin.unwrap_or_default(),
        buffer,
        tia,
        inamp,
        diff,
        pre,
        plan,
        chain: Some(chain),
    })
}

/// Each part's role, the stage that lists it and that stage's kind.
struct Roles<'c> {
    c: &'c Circuit,
    stage: Vec<Option<usize>>,
    kinds: Vec<Option<StageKind>>,
}

impl<'c> Roles<'c> {
    fn new(c: &'c Circuit) -> Roles<'c> {
        let stage: Vec<Option<usize>> =
            c.parts.iter().map(|p| c.stages.iter().position(|s| s.parts.contains(&p.reference))).collect();
        let kinds = stage.iter().map(|s| s.map(|k| c.stages[k].kind)).collect();
        Roles { c, stage, kinds }
    }

    /// Parts in circuit order whose stage kind passes `stage` and whose role passes `role`.
    fn all(&self, stage: impl Fn(StageKind) -> bool, role: impl Fn(PartRole) -> bool) -> Vec<usize> {
        (0..self.c.parts.len())
            .filter(|&i| self.kinds[i].is_some_and(&stage) && self.c.parts[i].role.is_some_and(&role))
            .collect()
    }

    /// The first part of a stage of kind `kind` with role `role`.
    fn find(&self, kind: StageKind, role: PartRole) -> Option<usize> {
        self.all(|k| k == kind, |x| x == role).first().copied()
    }

    /// The first part of a stage of kind `kind` with role `role`, with two nodes.
    fn two(&self, kind: StageKind, role: PartRole) -> Option<usize> {
        self.find(kind, role).filter(|&i| self.c.parts[i].nodes.len() == 2)
    }

    /// The first amplifier of a stage of kind `kind` with role `role`, with its five nodes.
    fn amp(&self, kind: StageKind, role: PartRole) -> Option<usize> {
        self.find(kind, role).filter(|&i| self.c.parts[i].nodes.len() >= 5)
    }

    /// The first bench part with role `role`, with two nodes.
    fn bench(&self, role: PartRole) -> Option<usize> {
        (0..self.c.parts.len()).find(|&i| {
            let p = &self.c.parts[i];
            p.bench && p.role == Some(role) && p.nodes.len() == 2
        })
    }

    fn nodes(&self, i: usize) -> &[String] {
        &self.c.parts[i].nodes
    }

    /// Part `i` as a step from node `from` to its other end.
    fn step(&self, i: usize, from: &str) -> Step {
        Step { part: i, from: from.to_string(), to: other(&self.c.parts[i], from) }
    }
}

/// A divider's legs and its bypass.
fn divider(x: PartRole) -> bool {
    matches!(x, R::DividerTop | R::DividerBottom | R::Bypass)
}

/// The sensor model on the bench: a high-impedance sensor's, a photodiode's, or the plain one.
fn sensor(r: &Roles, terminal: &dyn Fn(&str) -> bool) -> Sensor {
    let c = r.c;
    let source = r.bench(R::Emf).zip(r.bench(R::SourceResistance));
    if let Some((vs, rs)) = source {
        let (emf, ret) = (r.nodes(vs)[0].clone(), r.nodes(vs)[1].clone());
        let term = other(&c.parts[rs], &emf);
        let (series_c, shunt_c) = (r.bench(R::SeriesCapacitance), r.bench(R::ShuntCapacitance));
        let lifted = !terminal(&ret);
        let whole = emf != ret && has(&c.parts[rs], &emf) && term != emf && term != ret;
        if whole && (lifted || series_c.is_some() || shunt_c.is_some()) {
            return Sensor::HighImpedance(HighZ { vs, rs, series_c, shunt_c, emf, ret, term, lifted });
        }
    }
    if let Some(first) = r.bench(R::Photocurrent) {
        let term = r.nodes(first)[0].clone();
        let bench = |i: &usize| c.parts[*i].bench && c.parts[*i].nodes.len() == 2;
        let with = |roles: &[PartRole]| -> Vec<usize> {
            (0..c.parts.len()).filter(bench).filter(|&i| c.parts[i].role.is_some_and(|x| roles.contains(&x))).collect()
        };
        let mut cols = with(&[R::Photocurrent, R::DarkCurrent]);
        cols.extend(with(&[R::ShuntCapacitance]));
        return Sensor::Photodiode(Diode { cols, term });
    }
    let source = source.map(|(vs, rs)| (vs, rs, r.nodes(vs)[0].clone()));
    let current = r.bench(R::LoopCurrent).map(|i| (i, r.nodes(i)[1].clone()));
    let term = match (&source, &current) {
        (Some((_, rs, emf)), _) => other(&c.parts[*rs], emf),
        (None, Some((_, to))) => to.clone(),
        (None, None) => String::new(),
    };
    Sensor::Plain(Plain { source, current, term })
}

/// The follower stage: its amplifier, R_b from its + input, and the divider with its bypass
/// that R_b returns to (or the sensor's own return, when that is lifted off ground).
fn buffer(r: &Roles, terminal: &dyn Fn(&str) -> bool) -> Option<Buffer> {
    let amp = r.amp(StageKind::Follower, R::Amplifier)?;
    let (input, out) = (r.nodes(amp)[0].clone(), r.nodes(amp)[4].clone());
    let in_follower = |k: StageKind| k == StageKind::Follower;
    let bias: Vec<Step> = r.all(in_follower, |x| x == R::Bias).into_iter().map(|i| r.step(i, &input)).collect();
    let legs = r.all(in_follower, divider);
    let emf = r.bench(R::Emf).map(|i| r.nodes(i).to_vec());
    let ret = emf
        .filter(|n| !terminal(&n[1]) && n[1] != input && n[1] != out && n[1] != n[0])
        .map(|n| n[1].clone())
        .or_else(|| bias.first().filter(|_| !legs.is_empty()).map(|s| s.to.clone()));
    let reference = match &ret {
        Some(node) => legs.into_iter().map(|i| r.step(i, node)).collect(),
        None => Vec::new(),
    };
    Some(Buffer { amp, input, out, bias, ret, reference })
}

/// The transimpedance stage: its amplifier, R_f and C_f, the bias divider at its + input.
fn tia(r: &Roles) -> Option<Tia> {
    let amp = r.amp(StageKind::Transimpedance, R::Amplifier)?;
    let n = r.nodes(amp);
    let (plus, input, out) = (n[0].clone(), n[1].clone(), n[4].clone());
    let in_stage = |k: StageKind| k == StageKind::Transimpedance;
    let feedback = r.all(in_stage, |x| matches!(x, R::FeedbackResistor | R::FeedbackCapacitor));
    let bias = r.all(in_stage, divider).into_iter().map(|i| r.step(i, &plus)).collect();
    let fed = r.bench(R::Photocurrent).is_some_and(|i| r.nodes(i)[0] == input);
    Some(Tia { amp, input, plus, out, feedback, bias, fed })
}

/// The pair's bench: its EMF between the legs, the common mode, each leg's impedance; a
/// bridge's excitation and load.
fn pair(r: &Roles) -> Option<Pair> {
    let vsense = r.bench(R::DifferentialEmf)?;
    let vcm = r.bench(R::CommonMode)?;
    let leg_up = r.bench(R::LegImpedance(Side::Plus))?;
    let leg_low = r.bench(R::LegImpedance(Side::Minus))?;
    let emf = [r.nodes(vsense)[0].clone(), r.nodes(vsense)[1].clone()];
    let c = r.c;
    if !has(&c.parts[leg_up], &emf[0]) || !has(&c.parts[leg_low], &emf[1]) {
        return None;
    }
    let term = [other(&c.parts[leg_up], &emf[0]), other(&c.parts[leg_low], &emf[1])];
    if term[0] == term[1] {
        return None;
    }
    let wide = r.bench(R::BridgeLoad).is_some();
    let bridge = r.bench(R::Excitation).zip(r.bench(R::BridgeLoad));
    Some(Pair { vsense, vcm, leg_up, leg_low, emf, term, wide, bridge })
}

/// The difference stage fed from `lines` (upper, lower): R1 and R3 (whichever starts on each
/// line), R2, R4 and, when the reference is not ground or a rail, the follower driving it.
fn stage(r: &Roles, terminal: &dyn Fn(&str) -> bool, lines: &[String; 2]) -> Option<Stage> {
    let kind = StageKind::Difference;
    let amp = r.amp(kind, R::Amplifier)?;
    let n = r.nodes(amp);
    let (inp, inn, out) = (n[0].clone(), n[1].clone(), n[4].clone());
    let (r1, r3) = (r.two(kind, R::MinusInput)?, r.two(kind, R::PlusInput)?);
    let on = |i: usize, k: usize| has(&r.c.parts[i], &lines[k]);
    let (up, low) = if on(r3, 0) && on(r1, 1) { (r3, r1) } else { (r1, r3) };
    if !on(up, 0) || !on(low, 1) {
        return None;
    }
    let pin_node = [other(&r.c.parts[up], &lines[0]), other(&r.c.parts[low], &lines[1])];
    let feedback = r.all(|k| k == kind, |x| x == R::FeedbackResistor);
    let to_ref = r.two(kind, R::ToReference)?;
    let reference = other(&r.c.parts[to_ref], &inp);
    let follower = if terminal(&reference) {
        None
    } else {
        let f = r
            .all(|_| true, |x| x == R::ReferenceFollower)
            .into_iter()
            .find(|&i| r.nodes(i).len() >= 5 && r.nodes(i)[4] == reference)?;
        let dref = r.nodes(f)[0].clone();
        let legs: Vec<usize> = r
            .all(|_| true, divider)
            .into_iter()
            .filter(|&i| r.stage[i] == r.stage[f] && has(&r.c.parts[i], &dref))
            .collect();
        if legs.is_empty() {
            return None;
        }
        Some((f, dref.clone(), legs.into_iter().map(|i| r.step(i, &dref)).collect()))
    };
    Some(Stage {
        lines: lines.clone(),
        amp,
        input: [up, low],
        pin_node,
        inp,
        inn,
        out,
        feedback,
        to_ref,
        reference,
        follower,
    })
}

/// The instrumentation amplifier's input stage: each leg's protection resistor and input
/// amplifier, R_F on each leg and R_G (none of them for two followers), then the
/// difference stage fed from the input amplifiers' outputs.
fn inamp(r: &Roles, terminal: &dyn Fn(&str) -> bool) -> Option<Inamp> {
    let pair = pair(r)?;
    let kind = StageKind::InstrumentationInput;
    let sides = [Side::Plus, Side::Minus];
    let mut protect = [0; 2];
    let mut plus = [String::new(), String::new()];
    let mut amps = [0; 2];
    for k in 0..2 {
        let p = r.two(kind, R::Protection(sides[k]))?;
        if !has(&r.c.parts[p], &pair.term[k]) {
            return None;
        }
        protect[k] = p;
        plus[k] = other(&r.c.parts[p], &pair.term[k]);
        amps[k] = r.amp(kind, R::InputAmplifier(sides[k]))?;
    }
    let minus = [r.nodes(amps[0])[1].clone(), r.nodes(amps[1])[1].clone()];
    let outs = [r.nodes(amps[0])[4].clone(), r.nodes(amps[1])[4].clone()];
    let rf = sides.map(|s| r.two(kind, R::LegFeedback(s)));
    let gain = match (rf, r.two(kind, R::GainResistor)) {
        ([Some(a), Some(b)], Some(g)) => Some(([a, b], g)),
        ([None, None], None) => None,
        _ => return None,
    };
    let stage = stage(r, terminal, &outs)?;
    let caption =
        r.c.stages.iter().find(|s| s.kind == kind).map(|s| inamp::caption(&s.description)).unwrap_or_default();
    Some(Inamp { pair, protect, plus, amps, minus, outs, gain, stage, caption })
}
