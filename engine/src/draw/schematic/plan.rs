//! Placement by role: for the first amplifier, which input the sensor feeds (drawn on the
//! signal line) and which is the other; the series path to it from the sensor terminal (or
//! from a buffer's output); the
//! legs hanging from each input line (a part or a chain of two to a rail or ground, or one
//! part to a node tied to rails and ground by several parts — a reference divider with its
//! bypass); the feedback parts. What matches no role is left for the fallback area.

use crate::circuit::{Circuit, Part, PartKind, GND};

/// One part of a chain, drawn from node `from` to node `to`.
#[derive(Debug, Clone)]
pub(super) struct Step {
    pub(super) part: usize,
    pub(super) from: String,
    pub(super) to: String,
}

/// A column hanging from an input line: parts in series to a rail or ground, or one part to
/// a node tied to rails and ground by several parts (a reference divider and its bypass).
#[derive(Debug, Clone)]
pub(super) struct Leg {
    pub(super) steps: Vec<Step>,
    pub(super) end: String,
    pub(super) block: Option<Vec<Step>>,
}

/// Where each part goes, by the role of the nodes it joins.
#[derive(Debug, Default)]
pub(super) struct Plan {
    pub(super) amp: Option<usize>,
    pub(super) inp: String,
    pub(super) inn: String,
    pub(super) out: String,
    /// The input the sensor feeds (drawn on the signal line) and the other one.
    pub(super) top: String,
    pub(super) bottom: String,
    /// Where the series path starts: the sensor terminal, or a buffer's output.
    pub(super) start: String,
    /// A series path joins `start` to `top`.
    pub(super) connected: bool,
    pub(super) series: Vec<Step>,
    pub(super) top_legs: Vec<Leg>,
    pub(super) bottom_legs: Vec<Leg>,
    pub(super) feedback: Vec<usize>,
}

/// A supply rail: a bench source from `node` to ground.
#[derive(Debug, Clone)]
pub(super) struct Rail {
    pub(super) node: String,
    pub(super) name: String,
    pub(super) volts: f64,
    pub(super) part: usize,
}

pub(super) fn has(p: &Part, n: &str) -> bool {
    p.nodes.iter().any(|x| x == n)
}

pub(super) fn other(p: &Part, n: &str) -> String {
    p.nodes.iter().find(|x| *x != n).cloned().unwrap_or_else(|| n.to_string())
}

/// A resistor or capacitor to build, with two nodes.
pub(super) fn plain(p: &Part) -> bool {
    !p.bench && p.nodes.len() == 2 && matches!(p.kind, PartKind::Resistor | PartKind::Capacitor)
}

impl Plan {
    /// The gain stage fed from node `start` (the sensor terminal, or a buffer's output);
    /// parts `skip` belong to another block (the buffer) and are left alone.
    pub(super) fn of(c: &Circuit, rails: &[Rail], start: &str, skip: &[usize]) -> Plan {
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
}

/// Shortest chain of unused parts from node `start` to `target`.
pub(super) fn path(
    c: &Circuit, start: &str, target: &str, blocked: &dyn Fn(&str) -> bool, used: &[bool],
) -> Option<Vec<Step>> {
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
pub(super) fn legs(
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
