//! The single-ended gain stage and the filter and drive after it, from their roles (see
//! [`super`]).

use super::super::chain::{caption, Chain, Section, Shape};
use super::super::plan::{has, other, Leg, Plan, Step};
use super::{divider, Roles, R};
use crate::circuit::{SectionPart, StageKind};

/// The single-ended gain stage fed from `start` (`first`: the first of two gain stages): its
/// amplifier; the series path of the input
/// network's coupling capacitor and attenuator and the input resistor; the legs from its
/// inputs (to ground or a rail, R_g with C_g, the bias resistor with the reference divider,
/// the filter's pole to ground, a loop's shunt); the feedback resistor and a pole across it.
pub(super) fn plan(r: &Roles, terminal: &dyn Fn(&str) -> bool, start: &str, first: bool) -> Plan {
    let gain = |k: StageKind| if first { k == StageKind::FirstGain } else { matches!(k, StageKind::Gain { .. }) };
    let Some(u) = r.all(gain, |x| x == R::Amplifier).into_iter().find(|&i| r.nodes(i).len() >= 5) else {
        return Plan { start: start.to_string(), ..Plan::default() };
    };
    let n = r.nodes(u);
    let (inp, inn, out) = (n[0].clone(), n[1].clone(), n[4].clone());
    let mut plan = Plan {
        amp: Some(u),
        inp: inp.clone(),
        inn: inn.clone(),
        out: out.clone(),
        start: start.to_string(),
        ..Plan::default()
    };
    if inn != out {
        plan.feedback = r.all(|_| true, |x| x == R::FeedbackPole);
        plan.feedback.extend(r.all(gain, |x| x == R::FeedbackResistor));
        plan.feedback.retain(|&i| has(&r.c.parts[i], &inn));
        crate::order::sort_by_key(&mut plan.feedback, |&i| i);
    }
    let series = r.all(
        |k| gain(k) || k == StageKind::InputNetwork,
        |x| matches!(x, R::CouplingCapacitor | R::Attenuator | R::PlusInput | R::MinusInput),
    );
    // From the start along the series parts, each taken once, to one of the inputs.
    let walk = || -> Option<(String, Vec<Step>)> {
        let (mut at, mut steps) = (start.to_string(), Vec::new());
        while at != inp && at != inn {
            let i = series
                .iter()
                .copied()
                .find(|&i| has(&r.c.parts[i], &at) && !steps.iter().any(|s: &Step| s.part == i))?;
            let s = r.step(i, &at);
            at = s.to.clone();
            steps.push(s);
        }
        Some((at, steps))
    };
    let (top, steps, connected) = match walk() {
        Some((top, steps)) => (top, steps, true),
        None => (inp.clone(), Vec::new(), false),
    };
    plan.bottom = if top == inp { inn.clone() } else { inp.clone() };
    plan.top = top;
    plan.series = steps;
    plan.connected = connected;
    plan.top_legs = legs(r, terminal, &plan.top, true, &gain);
    if plan.bottom != plan.out && plan.bottom != plan.top {
        plan.bottom_legs = legs(r, terminal, &plan.bottom, false, &gain);
    }
    plan
}

/// The legs hanging from input node `node`: reference blocks (`allow_block`) first.
fn legs(
    r: &Roles, terminal: &dyn Fn(&str) -> bool, node: &str, allow_block: bool, gain: &dyn Fn(StageKind) -> bool,
) -> Vec<Leg> {
    if terminal(node) {
        return Vec::new();
    }
    let around = |k: StageKind| gain(k) || matches!(k, StageKind::Reference | StageKind::InputNetwork);
    let mut out = Vec::new();
    // A loop's shunt hangs here too when the input sits on the sensor terminal.
    let leg = |x| matches!(x, R::GroundLeg | R::OffsetLeg | R::Bias | R::GainSetting | R::InputPole | R::Shunt);
    for i in r.all(|_| true, leg) {
        let role = r.c.parts[i].role;
        let own = matches!(role, Some(R::InputPole | R::Shunt)) || r.kinds[i].is_some_and(around);
        if !own || r.nodes(i).len() != 2 || !has(&r.c.parts[i], node) {
            continue;
        }
        let first = r.step(i, node);
        let m = first.to.clone();
        if terminal(&m) {
            out.push(Leg { end: m, steps: vec![first], block: None });
            continue;
        }
        // What continues from the far end: C_g under R_g, the reference divider under R_b.
        let next: Vec<Step> = match role {
            Some(R::GainSetting) => r.all(gain, |x| x == R::DcBlock),
            Some(R::Bias) => r.all(around, divider),
            _ => Vec::new(),
        }
        .into_iter()
        .filter(|&j| has(&r.c.parts[j], &m))
        .map(|j| r.step(j, &m))
        .collect();
        match next.len() {
            0 => {}
            1 => out.push(Leg { end: next[0].to.clone(), steps: vec![first, next[0].clone()], block: None }),
            _ if allow_block => out.push(Leg { steps: vec![first], end: m, block: Some(next) }),
            _ => {}
        }
    }
    crate::order::sort_by_key(&mut out, |l| l.block.is_none());
    out
}

/// The filter sections in order from the gain stage's output `from`, each whole and fed from
/// the one before, then the drive to the converter pin; `None` when a part of either stage
/// is left over (a section or the drive not whole).
pub(super) fn chain(r: &Roles, terminal: &dyn Fn(&str) -> bool, from: &str, pin: Option<String>) -> Option<Chain> {
    let c = r.c;
    let pin_node = pin.clone().unwrap_or_default();
    let mut chain = Chain { end: from.to_string(), pin, ..Chain::default() };
    let filter = |k: StageKind| k == StageKind::Filter;
    let owned = r.all(filter, |x| matches!(x, R::Section { .. }));
    let mut numbers: Vec<u32> = owned
        .iter()
        .filter_map(|&i| match c.parts[i].role {
            Some(R::Section { section, .. }) => Some(section),
            _ => None,
        })
        .collect();
    crate::order::sort_by_key(&mut numbers, |&k| k);
    numbers.dedup();
    let mut taken = 0;
    let mut drawn_refs: Vec<String> = Vec::new();
    for k in numbers {
        let part = |p: SectionPart| r.find(StageKind::Filter, R::Section { section: k, part: p });
        let u = part(SectionPart::Amplifier).filter(|&u| r.nodes(u).len() >= 5)?;
        let r1 = part(SectionPart::R1)?;
        let shape = match (part(SectionPart::R2), part(SectionPart::R3)) {
            (Some(r2), Some(r3)) => {
                Shape::MultipleFeedback { r1, r2, r3, cg: part(SectionPart::Cg)?, cf: part(SectionPart::Cf)? }
            }
            (Some(r2), None) => Shape::SallenKey { r1, r2, cf: part(SectionPart::Cf)?, cg: part(SectionPart::Cg)? },
            _ => Shape::FirstOrder { r: r1, cg: part(SectionPart::Cg)? },
        };
        if !has(&c.parts[r1], &chain.end) {
            return None;
        }
        let n = r.nodes(u);
        let (plus, minus, out) = (n[0].clone(), n[1].clone(), n[4].clone());
        let a = match shape {
            Shape::FirstOrder { .. } => plus.clone(),
            _ => other(&c.parts[r1], &chain.end),
        };
        let mut s = Section {
            shape,
            amp: u,
            input: chain.end.clone(),
            a,
            plus,
            minus,
            out,
            reference: None,
            caption: caption(&c.parts[u].purpose),
        };
        // An inverting section's reference divider, drawn at the first section that uses it.
        if matches!(s.shape, Shape::MultipleFeedback { .. }) && !terminal(&s.plus) && !drawn_refs.contains(&s.plus) {
            drawn_refs.push(s.plus.clone());
            let reference = |k: StageKind| k == StageKind::Reference;
            let steps: Vec<Step> = r
                .all(reference, divider)
                .into_iter()
                .filter(|&j| has(&c.parts[j], &s.plus))
                .map(|j| r.step(j, &s.plus))
                .collect();
            s.reference = Some(steps).filter(|v| !v.is_empty());
        }
        taken += 1 + s.shape.parts().len();
        chain.end = s.out.clone();
        chain.sections.push(s);
    }
    let drive = |k: StageKind| k == StageKind::ConverterDrive;
    if let Some(d) = r.two(StageKind::ConverterDrive, R::DriveResistor) {
        if !has(&c.parts[d], &chain.end) || !has(&c.parts[d], &pin_node) {
            return None;
        }
        chain.drive.resistor = Some(d);
        chain.end = pin_node.clone();
        taken += 1;
    }
    let at_pin = r.all(drive, |x| matches!(x, R::ChargeBucket | R::Clamp));
    if !at_pin.is_empty() && chain.end != pin_node {
        return None;
    }
    for j in at_pin {
        chain.drive.at_pin.push(r.step(j, &pin_node));
        taken += 1;
    }
    let listed = owned.len() + r.all(drive, |_| true).len();
    (taken == listed).then_some(chain)
}
