//! FALLBACK (see [`super`]): the single-ended gain stage and the chain after it, recognised
//! from their nodes.
//!
//! The gain stage: the first amplifier, which input the sensor feeds (the shortest chain of
//! parts from the start to it) and which is the other; the legs hanging from each input (a
//! part or a chain of two to a rail or ground, or one part to a node tied to rails and
//! ground by several parts — a reference divider with its bypass); the feedback parts.
//!
//! The chain: from the gain stage's output, an amplifier whose input network starts there
//! and matches one section shape — first order (R along the line, C to ground, follower),
//! unity-gain Sallen-Key (R1, R2 in series to the + input, C_f from their junction to the
//! output, C_g from + to ground, follower) or unity-gain multiple feedback (R1 into a
//! junction with C_g to ground, R2 back from the output, R3 on to the − input, C_f from the
//! output to the − input, + on a reference) — its output the next start; then a resistor
//! to the converter pin (the node of the bench's converter load) and the parts from the pin
//! to ground or a rail. What matches no role is left for the fallback area.

use super::super::chain::{caption, Chain, Section, Shape};
use super::super::plan::{has, other, plain, Leg, Plan, Rail, Step};
use crate::circuit::{Circuit, PartKind, StageRole, GND};

/// The gain stage fed from node `start` (the sensor terminal, or a buffer's output); parts
/// `skip` belong to another block (the buffer) and are left alone.
pub(in super::super) fn plan(c: &Circuit, rails: &[Rail], start: &str, skip: &[usize]) -> Plan {
    let Some(u) = c
        .parts
        .iter()
        .enumerate()
        .position(|(i, p)| p.kind == PartKind::OpAmp && p.nodes.len() >= 5 && !p.bench && !skip.contains(&i))
    else {
        return Plan { start: start.to_string(), ..Plan::default() };
    };
    let nodes = &c.parts[u].nodes;
    let mut plan = Plan {
        amp: Some(u),
        inp: nodes[0].clone(),
        inn: nodes[1].clone(),
        out: nodes[4].clone(),
        start: start.to_string(),
        ..Plan::default()
    };
    let terminal = |n: &str| n == GND || rails.iter().any(|r| r.node == n);
    let mut used = vec![false; c.parts.len()];
    for &i in skip {
        if let Some(x) = used.get_mut(i) {
            *x = true;
        }
    }
    used[u] = true;
    if plan.inn != plan.out {
        for (i, p) in c.parts.iter().enumerate() {
            if plain(p) && has(p, &plan.out) && has(p, &plan.inn) && !used[i] {
                plan.feedback.push(i);
                used[i] = true;
            }
        }
    }
    let (inp, inn, out) = (plan.inp.clone(), plan.inn.clone(), plan.out.clone());
    let blocked = |n: &str, avoid: &str| terminal(n) || n == out || n == "emf" || n == avoid;
    let (top, series, connected) = if inp == start || inn == start {
        (start.to_string(), Vec::new(), true)
    } else if let Some(s) = path(c, start, &inp, &|n| blocked(n, &inn), &used) {
        (inp.clone(), s, true)
    } else if let Some(s) = path(c, start, &inn, &|n| blocked(n, &inp), &used) {
        (inn.clone(), s, true)
    } else {
        (inp.clone(), Vec::new(), false)
    };
    for s in &series {
        used[s.part] = true;
    }
    plan.bottom = if top == inp { inn.clone() } else { inp.clone() };
    plan.top = top;
    plan.series = series;
    plan.connected = connected;
    let special = [
        plan.inp.clone(),
        plan.inn.clone(),
        plan.out.clone(),
        "sense".to_string(),
        "emf".to_string(),
        start.to_string(),
    ];
    plan.top_legs = legs(c, &plan.top, true, &mut used, &terminal, &special);
    if plan.bottom != plan.out && plan.bottom != plan.top {
        plan.bottom_legs = legs(c, &plan.bottom, false, &mut used, &terminal, &special);
    }
    plan
}

/// Shortest chain of unused parts from node `start` to `target`.
fn path(c: &Circuit, start: &str, target: &str, blocked: &dyn Fn(&str) -> bool, used: &[bool]) -> Option<Vec<Step>> {
    let mut seen: Vec<(String, Option<(usize, String)>)> = vec![(start.to_string(), None)];
    let mut head = 0;
    while head < seen.len() {
        let at = seen[head].0.clone();
        head += 1;
        for (i, p) in c.parts.iter().enumerate() {
            if used[i] || !plain(p) || !has(p, &at) {
                continue;
            }
            let next = other(p, &at);
            if seen.iter().any(|(n, _)| *n == next) || (next != target && blocked(&next)) {
                continue;
            }
            seen.push((next.clone(), Some((i, at.clone()))));
            if next == target {
                let mut steps = Vec::new();
                let mut cur = next;
                while let Some((_, Some((part, prev)))) = seen.iter().find(|(n, _)| *n == cur).cloned() {
                    steps.push(Step { part, from: prev.clone(), to: cur });
                    cur = prev;
                }
                steps.reverse();
                return Some(steps);
            }
        }
    }
    None
}

/// The legs hanging from input node `node`: reference blocks first.
fn legs(
    c: &Circuit, node: &str, allow_block: bool, used: &mut [bool], terminal: &dyn Fn(&str) -> bool, special: &[String],
) -> Vec<Leg> {
    let mut out = Vec::new();
    if terminal(node) {
        return out;
    }
    for i in 0..c.parts.len() {
        let p = &c.parts[i];
        if used[i] || !plain(p) || !has(p, node) {
            continue;
        }
        let m = other(p, node);
        let first = Step { part: i, from: node.to_string(), to: m.clone() };
        if terminal(&m) {
            used[i] = true;
            out.push(Leg { steps: vec![first], end: m, block: None });
            continue;
        }
        if m == node || special.contains(&m) {
            continue;
        }
        let rest: Vec<usize> = (0..c.parts.len()).filter(|&j| j != i && has(&c.parts[j], &m)).collect();
        if rest.is_empty() || !rest.iter().all(|&j| !used[j] && plain(&c.parts[j]) && terminal(&other(&c.parts[j], &m)))
        {
            continue;
        }
        let steps: Vec<Step> =
            rest.iter().map(|&j| Step { part: j, from: m.clone(), to: other(&c.parts[j], &m) }).collect();
        if steps.len() == 1 {
            let end = steps[0].to.clone();
            out.push(Leg { steps: vec![first, steps[0].clone()], end, block: None });
        } else if allow_block {
            out.push(Leg { steps: vec![first], end: m.clone(), block: Some(steps) });
        } else {
            continue;
        }
        used[i] = true;
        for j in rest {
            used[j] = true;
        }
    }
    crate::order::sort_by_key(&mut out, |l| l.block.is_none());
    out
}

/// Walks the chain from `from` (the gain stage's output); parts it takes are marked in `used`.
pub(in super::super) fn chain(c: &Circuit, from: &str, rails: &[Rail], used: &mut [bool]) -> Chain {
    let terminal = |n: &str| n == GND || rails.iter().any(|r| r.node == n);
    let load = c
        .parts
        .iter()
        .find(|p| p.bench && p.stage == StageRole::Converter && p.nodes.len() == 2 && has(p, GND))
        .map(|p| other(p, GND));
    let pin = load.clone().unwrap_or_else(|| "adc".to_string());
    let mut chain = Chain { end: from.to_string(), pin: load, ..Chain::default() };
    let mut drawn_refs: Vec<String> = Vec::new();
    for _ in 0..c.parts.len() {
        if chain.end == pin || terminal(&chain.end) {
            break;
        }
        let found = (0..c.parts.len()).find_map(|u| section(c, u, &chain.end, used));
        let Some(mut s) = found else { break };
        used[s.amp] = true;
        for i in s.shape.parts() {
            used[i] = true;
        }
        let inverting = matches!(s.shape, Shape::MultipleFeedback { .. });
        if inverting && !terminal(&s.plus) && !drawn_refs.contains(&s.plus) {
            drawn_refs.push(s.plus.clone());
            let steps: Vec<Step> = (0..c.parts.len())
                .filter(|&j| {
                    !used[j]
                        && plain(&c.parts[j])
                        && has(&c.parts[j], &s.plus)
                        && terminal(&other(&c.parts[j], &s.plus))
                })
                .map(|j| Step { part: j, from: s.plus.clone(), to: other(&c.parts[j], &s.plus) })
                .collect();
            for st in &steps {
                used[st.part] = true;
            }
            s.reference = Some(steps).filter(|v| !v.is_empty());
        }
        chain.end = s.out.clone();
        chain.sections.push(s);
    }
    if chain.end != pin && !terminal(&chain.end) {
        if let Some(r) = find(c, used, PartKind::Resistor, &chain.end, &pin) {
            used[r] = true;
            chain.drive.resistor = Some(r);
            chain.end = pin.clone();
        }
    }
    if chain.end == pin {
        for (j, p) in c.parts.iter().enumerate() {
            let kind = matches!(p.kind, PartKind::Capacitor | PartKind::Diode);
            if !used[j] && !p.bench && kind && p.nodes.len() == 2 && has(p, &pin) && terminal(&other(p, &pin)) {
                used[j] = true;
                chain.drive.at_pin.push(Step { part: j, from: pin.clone(), to: other(p, &pin) });
            }
        }
    }
    chain
}

/// The first unused resistor or capacitor of `kind` joining `x` and `y`.
fn find(c: &Circuit, used: &[bool], kind: PartKind, x: &str, y: &str) -> Option<usize> {
    if x == y {
        return None;
    }
    (0..c.parts.len()).find(|&i| {
        !used[i] && c.parts[i].kind == kind && plain(&c.parts[i]) && has(&c.parts[i], x) && has(&c.parts[i], y)
    })
}

/// Amplifier `u` as a section fed from `input`, if its parts match one shape.
fn section(c: &Circuit, u: usize, input: &str, used: &[bool]) -> Option<Section> {
    let amp = c.parts.get(u)?;
    if used[u] || amp.bench || amp.kind != PartKind::OpAmp || amp.nodes.len() < 5 {
        return None;
    }
    let (plus, minus, out) = (amp.nodes[0].clone(), amp.nodes[1].clone(), amp.nodes[4].clone());
    let distinct = |n: &str| n != GND && n != input && n != out;
    if out == GND || out == input || !distinct(&plus) && minus == out {
        return None;
    }
    let make = |shape: Shape, a: &str| Section {
        shape,
        amp: u,
        input: input.to_string(),
        a: a.to_string(),
        plus: plus.clone(),
        minus: minus.clone(),
        out: out.clone(),
        reference: None,
        caption: caption(&amp.purpose),
    };
    // Candidate junctions after R1: the far ends of unused resistors from the input.
    let r1s: Vec<(usize, String)> = (0..c.parts.len())
        .filter(|&i| !used[i] && c.parts[i].kind == PartKind::Resistor && plain(&c.parts[i]) && has(&c.parts[i], input))
        .map(|i| (i, other(&c.parts[i], input)))
        .filter(|(_, a)| a != input)
        .collect();
    if minus == out {
        for (r1, a) in &r1s {
            if !distinct(a) || *a == plus {
                continue;
            }
            let mut u2 = used.to_vec();
            u2[*r1] = true;
            let Some(r2) = find(c, &u2, PartKind::Resistor, a, &plus) else { continue };
            let Some(cf) = find(c, &u2, PartKind::Capacitor, a, &out) else { continue };
            let Some(cg) = find(c, &u2, PartKind::Capacitor, &plus, GND) else { continue };
            return Some(make(Shape::SallenKey { r1: *r1, r2, cf, cg }, a));
        }
        let r = find(c, used, PartKind::Resistor, input, &plus)?;
        let cg = find(c, used, PartKind::Capacitor, &plus, GND)?;
        return Some(make(Shape::FirstOrder { r, cg }, &plus));
    }
    if !distinct(&minus) || minus == plus {
        return None;
    }
    for (r1, a) in &r1s {
        if !distinct(a) || *a == minus || *a == plus {
            continue;
        }
        let mut u2 = used.to_vec();
        u2[*r1] = true;
        let Some(r2) = find(c, &u2, PartKind::Resistor, a, &out) else { continue };
        u2[r2] = true;
        let Some(r3) = find(c, &u2, PartKind::Resistor, a, &minus) else { continue };
        let Some(cg) = find(c, &u2, PartKind::Capacitor, a, GND) else { continue };
        let Some(cf) = find(c, &u2, PartKind::Capacitor, &out, &minus) else { continue };
        return Some(make(Shape::MultipleFeedback { r1: *r1, r2, r3, cg, cf }, a));
    }
    None
}
