//! FALLBACK for circuits that carry no roles (built part by part by hand, as the tests'
//! robustness rows do) or whose roles no longer describe a whole block (a synthesised
//! circuit altered afterwards): the blocks recognised from the shapes of their nodes and the
//! fixed bench names, as the drawing did before the circuit model had roles. A circuit
//! straight from synthesis never comes here ([`super::by_role`] reads it).
//!
//! What each recogniser looks for is the design contract of the synthesis module that
//! builds the block: the follower (`synth::front::follower`: its + input at `sense`, − tied
//! to the output), the transimpedance stage, the pair's bench (`VSENSE` between two legs,
//! `VCM`, a resistor from each leg to its terminal), the difference and instrumentation
//! amplifiers, the single-ended gain stage's series path and legs (`gain`) and the filter
//! sections and drive (`gain::chain`).

mod gain;

pub(super) use gain::chain;

use super::blocks::{Blocks, Diode, HighZ, Mode, Plain, Sensor};
use super::buffer::Buffer;
use super::diff::{Diff, Pair, Stage};
use super::inamp::{caption, Inamp};
use super::plan::{has, other, plain, Rail, Step};
use super::tia::Tia;
use crate::circuit::{Circuit, PartKind, StageRole, GND};

/// Every block of `c`, found by shape; the filter and drive are walked after the gain stage.
pub(super) fn blocks(c: &Circuit) -> Blocks {
    let rails = rails(c);
    let buffer = buffer(c, &rails);
    let tia = if buffer.is_none() { tia(c, &rails) } else { None };
    let inamp = if buffer.is_none() && tia.is_none() { inamp(c, &rails) } else { None };
    let diff = if buffer.is_none() && tia.is_none() && inamp.is_none() { diff(c, &rails) } else { None };
    let (start, skip) = Blocks::start(buffer.as_ref(), tia.as_ref(), "sense");
    let plan = (inamp.is_none() && diff.is_none()).then(|| gain::plan(c, &rails, &start, &skip));
    let sensor = sensor(c, &rails);
    Blocks {
        mode: Mode::Shapes,
        rails,
        sensor,
        emf: Some("emf".to_string()),
        pin: "adc".to_string(),
        buffer,
        tia,
        inamp,
        diff,
        pre: None,
        plan,
        chain: None,
    }
}

/// The supply rails: bench sources of the supply stage from a node to ground.
fn rails(c: &Circuit) -> Vec<Rail> {
    c.parts
        .iter()
        .enumerate()
        .filter(|(_, p)| {
            p.bench
                && p.kind == PartKind::VoltageSource
                && p.stage == StageRole::Supply
                && p.nodes.len() == 2
                && p.nodes[1] == GND
                && p.nodes[0] != GND
        })
        .map(|(i, p)| Rail { node: p.nodes[0].clone(), name: p.reference.clone(), volts: p.value, part: i })
        .collect()
}

/// The converter load on `net`: a bench resistor from it to ground.
pub(super) fn load(c: &Circuit, net: &str) -> Option<usize> {
    c.parts
        .iter()
        .position(|p| p.bench && p.kind == PartKind::Resistor && p.nodes.len() == 2 && has(p, net) && has(p, GND))
}

/// The sensor model: a high-impedance sensor's, a photodiode's, or the plain one.
fn sensor(c: &Circuit, rails: &[Rail]) -> Sensor {
    if let Some(h) = high_impedance(c, rails) {
        return Sensor::HighImpedance(h);
    }
    if let Some(d) = photodiode(c) {
        return Sensor::Photodiode(d);
    }
    let vs = c.parts.iter().position(|p| {
        p.bench
            && p.kind == PartKind::VoltageSource
            && p.stage == StageRole::Sensor
            && p.nodes.len() == 2
            && p.nodes[1] == GND
    });
    let emf = vs.and_then(|i| c.parts[i].nodes.first().cloned());
    let rs = emf.as_ref().and_then(|e| {
        c.parts
            .iter()
            .position(|p| p.bench && p.kind == PartKind::Resistor && p.nodes.len() == 2 && has(p, e) && has(p, "sense"))
    });
    // A current sensor (a loop's current) feeds the terminal from ground.
    let is = c.parts.iter().position(|p| {
        p.bench
            && p.kind == PartKind::CurrentSource
            && p.stage == StageRole::Sensor
            && p.nodes.len() == 2
            && p.nodes[0] == GND
    });
    let source = match (vs, rs, emf) {
        (Some(v), Some(r), Some(e)) => Some((v, r, e)),
        _ => None,
    };
    Sensor::Plain(Plain { source, current: is.map(|i| (i, c.parts[i].nodes[1].clone())), term: "sense".to_string() })
}

/// A high-impedance sensor's model, when the bench has one: a lifted return or a `CSENSE`.
fn high_impedance(c: &Circuit, rails: &[Rail]) -> Option<HighZ> {
    let sensor =
        |i: &usize| c.parts[*i].bench && c.parts[*i].stage == StageRole::Sensor && c.parts[*i].nodes.len() == 2;
    let vs = (0..c.parts.len()).filter(sensor).find(|&i| c.parts[i].kind == PartKind::VoltageSource)?;
    let (emf, ret) = (c.parts[vs].nodes[0].clone(), c.parts[vs].nodes[1].clone());
    if emf == ret || emf == "sense" || ret == "sense" {
        return None;
    }
    let rs = (0..c.parts.len())
        .filter(sensor)
        .find(|&i| c.parts[i].kind == PartKind::Resistor && has(&c.parts[i], &emf) && has(&c.parts[i], "sense"))?;
    let cap = |a: &str, b: &str| {
        (0..c.parts.len())
            .filter(sensor)
            .find(|&i| c.parts[i].kind == PartKind::Capacitor && has(&c.parts[i], a) && has(&c.parts[i], b))
    };
    let (series_c, shunt_c) = (cap(&emf, "sense"), cap("sense", &ret));
    let lifted = ret != GND && !rails.iter().any(|r| r.node == ret);
    if !lifted && series_c.is_none() && shunt_c.is_none() {
        return None;
    }
    Some(HighZ { vs, rs, series_c, shunt_c, emf, ret, term: "sense".to_string(), lifted })
}

/// A photodiode's model, when the bench has a current source from a terminal to ground.
fn photodiode(c: &Circuit) -> Option<Diode> {
    let sensor =
        |i: &usize| c.parts[*i].bench && c.parts[*i].stage == StageRole::Sensor && c.parts[*i].nodes.len() == 2;
    let first = (0..c.parts.len()).filter(sensor).find(|&i| {
        c.parts[i].kind == PartKind::CurrentSource && c.parts[i].nodes[1] == GND && c.parts[i].nodes[0] != GND
    })?;
    let term = c.parts[first].nodes[0].clone();
    // The current sources out of the terminal, then the capacitance across them.
    let mut cols: Vec<usize> = (0..c.parts.len())
        .filter(sensor)
        .filter(|&i| {
            c.parts[i].kind == PartKind::CurrentSource && c.parts[i].nodes[0] == term && c.parts[i].nodes[1] == GND
        })
        .collect();
    cols.extend(
        (0..c.parts.len())
            .filter(sensor)
            .filter(|&i| c.parts[i].kind == PartKind::Capacitor && has(&c.parts[i], &term) && has(&c.parts[i], GND)),
    );
    Some(Diode { cols, term })
}

/// A high-impedance sensor's follower: an amplifier of the buffer stage wired as a follower
/// (− input tied to the output), its + input at the sensor terminal `sense`.
fn buffer(c: &Circuit, rails: &[Rail]) -> Option<Buffer> {
    let terminal = |n: &str| n == GND || rails.iter().any(|r| r.node == n);
    let input = "sense";
    let amp = c.parts.iter().position(|p| {
        !p.bench
            && p.kind == PartKind::OpAmp
            && p.stage == StageRole::Buffer
            && p.nodes.len() >= 5
            && p.nodes[0] == input
            && p.nodes[1] == p.nodes[4]
            && p.nodes[4] != input
            && !terminal(&p.nodes[4])
    })?;
    let out = c.parts[amp].nodes[4].clone();
    let ret = c
        .parts
        .iter()
        .find(|p| p.bench && p.kind == PartKind::VoltageSource && p.stage == StageRole::Sensor && p.nodes.len() == 2)
        .map(|p| p.nodes[1].clone())
        .filter(|n| !terminal(n) && n != input && *n != out && n != "emf")
        // Or the bias reference R_b returns to: a node the rails and ground hold.
        .or_else(|| {
            c.parts.iter().filter(|p| plain(p) && has(p, input)).map(|p| other(p, input)).find(|n| {
                !terminal(n)
                    && *n != out
                    && n != "emf"
                    && c.parts.iter().any(|q| plain(q) && has(q, n) && terminal(&other(q, n)))
            })
        });
    let mut used = vec![false; c.parts.len()];
    used[amp] = true;
    let mut bias = Vec::new();
    for (i, p) in c.parts.iter().enumerate() {
        if !plain(p) || !has(p, input) {
            continue;
        }
        let to = other(p, input);
        if terminal(&to) || ret.as_deref() == Some(to.as_str()) {
            used[i] = true;
            bias.push(Step { part: i, from: input.to_string(), to });
        }
    }
    let reference = match &ret {
        Some(r) => c
            .parts
            .iter()
            .enumerate()
            .filter(|(i, p)| !used[*i] && plain(p) && has(p, r) && terminal(&other(p, r)))
            .map(|(i, p)| Step { part: i, from: r.clone(), to: other(p, r) })
            .collect(),
        None => Vec::new(),
    };
    Some(Buffer { amp, input: input.to_string(), out, bias, ret, reference })
}

/// A photodiode's transimpedance stage: an amplifier of that stage whose − input is not its
/// output, feedback from the output to the − input, the + input at ground, a rail, or a
/// bias node held by a divider with its bypass.
fn tia(c: &Circuit, rails: &[Rail]) -> Option<Tia> {
    let terminal = |n: &str| n == GND || rails.iter().any(|r| r.node == n);
    let amp = c.parts.iter().position(|p| {
        !p.bench
            && p.kind == PartKind::OpAmp
            && p.stage == StageRole::Transimpedance
            && p.nodes.len() >= 5
            && p.nodes[1] != p.nodes[4]
            && p.nodes[0] != p.nodes[1]
            && p.nodes[0] != p.nodes[4]
            && !terminal(&p.nodes[1])
            && !terminal(&p.nodes[4])
    })?;
    let nodes = &c.parts[amp].nodes;
    let (plus, input, out) = (nodes[0].clone(), nodes[1].clone(), nodes[4].clone());
    let feedback: Vec<usize> = (0..c.parts.len())
        .filter(|&i| plain(&c.parts[i]) && has(&c.parts[i], &input) && has(&c.parts[i], &out))
        .collect();
    let bias = if terminal(&plus) {
        Vec::new()
    } else {
        (0..c.parts.len())
            .filter(|&i| plain(&c.parts[i]) && has(&c.parts[i], &plus) && terminal(&other(&c.parts[i], &plus)))
            .map(|i| Step { part: i, from: plus.clone(), to: other(&c.parts[i], &plus) })
            .collect()
    };
    // The sensor's current enters the − input, or the line starts at a named terminal.
    let fed = c.parts.iter().any(|p| {
        p.bench
            && p.kind == PartKind::CurrentSource
            && p.stage == StageRole::Sensor
            && p.nodes.len() == 2
            && p.nodes[0] == input
            && p.nodes[1] == GND
    });
    Some(Tia { amp, input, plus, out, feedback, bias, fed })
}

/// The pair's bench model: `VSENSE` between two legs (neither ground), a source from its
/// second leg to ground (`VCM`), a bench resistor from each leg to a terminal; a bridge's
/// `VEXC` and `RBRIDGE` from `exc` to ground.
fn pair(c: &Circuit, rails: &[Rail]) -> Option<Pair> {
    let terminal = |n: &str| n == GND || rails.iter().any(|r| r.node == n);
    let bench = |i: usize, k: PartKind| c.parts[i].bench && c.parts[i].kind == k && c.parts[i].nodes.len() == 2;
    let n = c.parts.len();
    let vsense = (0..n).find(|&i| {
        let p = &c.parts[i];
        bench(i, PartKind::VoltageSource)
            && p.stage == StageRole::Sensor
            && !terminal(&p.nodes[0])
            && !terminal(&p.nodes[1])
            && p.nodes[0] != p.nodes[1]
    })?;
    let emf = [c.parts[vsense].nodes[0].clone(), c.parts[vsense].nodes[1].clone()];
    let vcm = (0..n).find(|&i| {
        bench(i, PartKind::VoltageSource)
            && c.parts[i].stage == StageRole::Sensor
            && c.parts[i].nodes[0] == emf[1]
            && c.parts[i].nodes[1] == GND
    })?;
    let leg = |e: &str, away: &str| {
        (0..n).find(|&i| {
            bench(i, PartKind::Resistor)
                && has(&c.parts[i], e)
                && other(&c.parts[i], e) != away
                && other(&c.parts[i], e) != e
        })
    };
    let (leg_up, leg_low) = (leg(&emf[0], &emf[1])?, leg(&emf[1], &emf[0])?);
    let term = [other(&c.parts[leg_up], &emf[0]), other(&c.parts[leg_low], &emf[1])];
    if term[0] == term[1] || term.iter().any(|t| terminal(t) || emf.contains(t)) {
        return None;
    }
    let wide = c.parts.iter().any(|p| p.bench && p.reference == "RBRIDGE");
    let find =
        |r: &str| c.parts.iter().position(|p| p.bench && p.reference == r && p.nodes.len() == 2 && p.nodes[1] == GND);
    let bridge = find("VEXC").zip(find("RBRIDGE"));
    Some(Pair { vsense, vcm, leg_up, leg_low, emf, term, wide, bridge })
}

/// The pair straight into the difference amplifier.
fn diff(c: &Circuit, rails: &[Rail]) -> Option<Diff> {
    let pair = pair(c, rails)?;
    let stage = stage(c, rails, &pair.term, &pair.emf)?;
    Some(Diff { pair, stage })
}

/// The difference amplifier of the gain stage with an input resistor from each of `lines`
/// (upper, lower) to one of its inputs, feedback from the output to the − input, and one
/// more part from the + input to its reference: ground, a rail, or a node driven by a
/// follower whose + input sits on a divider with its bypass. Neither input may sit on
/// `lines` or on `avoid` (the pair's inner nodes).
fn stage(c: &Circuit, rails: &[Rail], lines: &[String; 2], avoid: &[String; 2]) -> Option<Stage> {
    let terminal = |n: &str| n == GND || rails.iter().any(|r| r.node == n);
    let n = c.parts.len();
    let term = lines;
    if term[0] == term[1] {
        return None;
    }
    let amp = (0..n).find(|&i| {
        let p = &c.parts[i];
        !p.bench
            && p.kind == PartKind::OpAmp
            && p.stage == StageRole::Gain
            && p.nodes.len() >= 5
            && p.nodes[0] != p.nodes[1]
            && p.nodes[4] != p.nodes[0]
            && p.nodes[4] != p.nodes[1]
            && !terminal(&p.nodes[4])
            && !p.nodes[..2].iter().any(|x| terminal(x) || term.contains(x) || avoid.contains(x))
    })?;
    let (inp, inn, out) = (c.parts[amp].nodes[0].clone(), c.parts[amp].nodes[1].clone(), c.parts[amp].nodes[4].clone());
    let feed = |t: &str, skip: Option<usize>| {
        (0..n).find(|&i| {
            Some(i) != skip
                && plain(&c.parts[i])
                && has(&c.parts[i], t)
                && [&inp, &inn].contains(&&other(&c.parts[i], t))
        })
    };
    let up = feed(&term[0], None)?;
    let low = feed(&term[1], Some(up))?;
    let pin_node = [other(&c.parts[up], &term[0]), other(&c.parts[low], &term[1])];
    if pin_node[0] == pin_node[1] {
        return None;
    }
    let feedback: Vec<usize> =
        (0..n).filter(|&i| plain(&c.parts[i]) && has(&c.parts[i], &inn) && has(&c.parts[i], &out)).collect();
    let to_ref = (0..n).find(|&i| {
        let p = &c.parts[i];
        i != up
            && i != low
            && plain(p)
            && has(p, &inp)
            && ![&inp, &inn, &out].contains(&&other(p, &inp))
            && !term.contains(&other(p, &inp))
    })?;
    if feedback.is_empty() {
        return None;
    }
    let reference = other(&c.parts[to_ref], &inp);
    let follower = if terminal(&reference) {
        None
    } else {
        let f = (0..n).find(|&i| {
            let p = &c.parts[i];
            !p.bench
                && p.kind == PartKind::OpAmp
                && p.nodes.len() >= 5
                && i != amp
                && p.nodes[4] == reference
                && p.nodes[1] == reference
                && p.nodes[0] != reference
        })?;
        let dref = c.parts[f].nodes[0].clone();
        if terminal(&dref) || [&inp, &inn, &out].contains(&&dref) {
            return None;
        }
        let divider: Vec<Step> = (0..n)
            .filter(|&i| plain(&c.parts[i]) && has(&c.parts[i], &dref) && terminal(&other(&c.parts[i], &dref)))
            .map(|i| Step { part: i, from: dref.clone(), to: other(&c.parts[i], &dref) })
            .collect();
        if divider.is_empty() {
            return None;
        }
        Some((f, dref, divider))
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

/// The instrumentation amplifier: the pair's bench model; from each terminal one resistor of
/// the input stage to the + input of an input-stage amplifier, the upper leg's first; both
/// followers, or each − input joined to its output by R_F and to the other − input by R_G;
/// then the difference amplifier fed from the two outputs.
fn inamp(c: &Circuit, rails: &[Rail]) -> Option<Inamp> {
    let terminal = |n: &str| n == GND || rails.iter().any(|r| r.node == n);
    let pair = pair(c, rails)?;
    let n = c.parts.len();
    let first = |i: usize| !c.parts[i].bench && c.parts[i].stage == StageRole::InputStage;
    let inner = |x: &String| terminal(x) || pair.term.contains(x) || pair.emf.contains(x);
    let mut protect = [0; 2];
    let mut plus = [String::new(), String::new()];
    for k in 0..2 {
        let t = &pair.term[k];
        let i = (0..n).find(|&i| {
            first(i)
                && plain(&c.parts[i])
                && c.parts[i].kind == PartKind::Resistor
                && has(&c.parts[i], t)
                && !inner(&other(&c.parts[i], t))
        })?;
        protect[k] = i;
        plus[k] = other(&c.parts[i], t);
    }
    if plus[0] == plus[1] {
        return None;
    }
    let amp_on = |node: &str| {
        (0..n).find(|&i| {
            let p = &c.parts[i];
            first(i)
                && p.kind == PartKind::OpAmp
                && p.nodes.len() >= 5
                && p.nodes[0] == node
                && p.nodes[1] != node
                && p.nodes[4] != node
                && !inner(&p.nodes[1])
                && !inner(&p.nodes[4])
        })
    };
    let amps = [amp_on(&plus[0])?, amp_on(&plus[1])?];
    let minus = [c.parts[amps[0]].nodes[1].clone(), c.parts[amps[1]].nodes[1].clone()];
    let outs = [c.parts[amps[0]].nodes[4].clone(), c.parts[amps[1]].nodes[4].clone()];
    if outs[0] == outs[1] || minus[0] == minus[1] || outs.iter().any(|o| plus.contains(o)) {
        return None;
    }
    let gain = match (minus[0] == outs[0], minus[1] == outs[1]) {
        (true, true) => None,
        (false, false) => {
            if minus.iter().any(|m| outs.contains(m) || plus.contains(m)) {
                return None;
            }
            let between = |a: &str, b: &str| {
                (0..n).find(|&i| first(i) && plain(&c.parts[i]) && has(&c.parts[i], a) && has(&c.parts[i], b))
            };
            Some(([between(&outs[0], &minus[0])?, between(&outs[1], &minus[1])?], between(&minus[0], &minus[1])?))
        }
        _ => return None,
    };
    let stage = stage(c, rails, &outs, &pair.emf)?;
    let caption =
        c.stages.iter().find(|s| s.role == StageRole::InputStage).map(|s| caption(&s.description)).unwrap_or_default();
    Some(Inamp { pair, protect, plus, amps, minus, outs, gain, stage, caption })
}
