//! Placement by role after the gain stage: the filter sections and the converter drive,
//! recognised from the nodes their parts join (the node names `synth::chain` gives are not
//! relied on, except that the converter pin is the node of the bench's converter load).
//!
//! From the gain stage's output the walk looks for an amplifier whose input network starts
//! there and matches one section shape — first order (R along the line, C to ground,
//! follower), unity-gain Sallen-Key (R1, R2 in series to the + input, C_f from their junction
//! to the output, C_g from + to ground, follower) or unity-gain multiple feedback (R1 into a
//! junction with C_g to ground, R2 back from the output, R3 on to the − input, C_f from the
//! output to the − input, + on a reference) — takes its output as the next start, and
//! repeats. Then the drive: a resistor from the last output to the pin, and the parts from
//! the pin to ground or a rail (charge bucket, clamp diode). Parts that fit no shape stay for
//! the fallback area.

use super::plan::{has, other, plain, Rail, Step};
use crate::circuit::{Circuit, PartKind, StageRole, GND};

/// The shape of a section and its parts (indices into the circuit's parts).
#[derive(Debug, Clone, PartialEq)]
pub(super) enum Shape {
    FirstOrder { r: usize, cg: usize },
    SallenKey { r1: usize, r2: usize, cf: usize, cg: usize },
    MultipleFeedback { r1: usize, r2: usize, r3: usize, cg: usize, cf: usize },
}

/// One filter section: its amplifier, shape and nodes.
#[derive(Debug, Clone)]
pub(super) struct Section {
    pub(super) shape: Shape,
    pub(super) amp: usize,
    pub(super) input: String,
    /// Junction after R1 (Sallen-Key, multiple feedback), the amplifier's inputs, its output.
    pub(super) a: String,
    pub(super) plus: String,
    pub(super) minus: String,
    pub(super) out: String,
    /// For an inverting section whose reference is neither ground nor a rail: the parts from
    /// the reference node to rails and ground, drawn at the first section that uses it
    /// (later ones show the node's name).
    pub(super) reference: Option<Vec<Step>>,
    /// Caption from the amplifier's description in the circuit model (one or two lines).
    pub(super) caption: Vec<String>,
}

/// The converter drive: the series resistor (if any) and what sits at the pin.
#[derive(Debug, Clone, Default)]
pub(super) struct Drive {
    pub(super) resistor: Option<usize>,
    /// Parts from the pin to ground or a rail: charge bucket, clamp diode.
    pub(super) at_pin: Vec<Step>,
}

/// What follows the gain stage, in signal order, and the pin it ends at.
#[derive(Debug, Clone, Default)]
pub(super) struct Chain {
    pub(super) sections: Vec<Section>,
    pub(super) drive: Drive,
    /// Where the walk ended: the pin, unless it stopped short.
    pub(super) end: String,
    /// The converter pin: the node of the bench's converter load, if there is one.
    pub(super) pin: Option<String>,
}

impl Chain {
    /// Nothing of the filter or the drive was found.
    pub(super) fn is_empty(&self) -> bool {
        self.sections.is_empty() && self.drive.resistor.is_none() && self.drive.at_pin.is_empty()
    }

    /// The walk ended on a node other than the converter pin (a chain it could not follow).
    pub(super) fn short(&self) -> bool {
        self.pin.as_ref().is_some_and(|p| *p != self.end)
    }

    /// Walks from `from` (the gain stage's output); parts it takes are marked in `used`.
    pub(super) fn of(c: &Circuit, from: &str, rails: &[Rail], used: &mut [bool]) -> Chain {
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
}

impl Shape {
    /// The passive parts of the section.
    pub(super) fn parts(&self) -> Vec<usize> {
        match *self {
            Shape::FirstOrder { r, cg } => vec![r, cg],
            Shape::SallenKey { r1, r2, cf, cg } => vec![r1, r2, cf, cg],
            Shape::MultipleFeedback { r1, r2, r3, cg, cf } => vec![r1, r2, r3, cg, cf],
        }
    }
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

/// "section 2 (Sallen-Key, f_n 33.7 kHz, Q 0.710): unity-gain amplifier" →
/// ["section 2 · Sallen-Key", "f_n 33.7 kHz, Q 0.710"]: the model's own words, split in two
/// lines; nothing without the "name (details): role" form.
fn caption(purpose: &str) -> Vec<String> {
    let Some((head, _)) = purpose.split_once(": ") else { return Vec::new() };
    let Some((name, inner)) = head.split_once(" (") else { return vec![head.to_string()] };
    let inner = inner.strip_suffix(')').unwrap_or(inner);
    match inner.split_once(", ") {
        Some((kind, rest)) => vec![format!("{name} · {kind}"), rest.to_string()],
        None => vec![format!("{name} · {inner}")],
    }
}

#[cfg(test)]
mod tests {
    use super::caption;

    #[test]
    fn caption_splits_the_model_text() {
        assert_eq!(
            caption("section 2 (Sallen-Key, f_n 33.7 kHz, Q 0.710): unity-gain amplifier"),
            ["section 2 · Sallen-Key", "f_n 33.7 kHz, Q 0.710"]
        );
        assert_eq!(caption("section 1 (first order, f_c 5 kHz): follower"), ["section 1 · first order", "f_c 5 kHz"]);
        assert!(caption("amplifier").is_empty());
    }
}
