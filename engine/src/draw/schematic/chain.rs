//! What follows the gain stage, as the drawing places it: the filter sections in signal
//! order, each with its shape (first order: R along the line, C to ground, follower;
//! unity-gain Sallen-Key: R1, R2 in series to the + input, C_f from their junction to the
//! output, C_g from + to ground, follower; unity-gain multiple feedback: R1 into a junction
//! with C_g to ground, R2 back from the output, R3 on to the − input, C_f from the output to
//! the − input, + on a reference), then the drive: the resistor to the converter pin and the
//! parts from the pin to ground or a rail (charge bucket, clamp diode).
//!
//! Found by the filter and drive stages' roles (`by_role`: each part names its section and
//! its place there), or, for circuits without roles, by walking from the gain stage's output
//! and matching those shapes (`by_shape`). Parts neither places stay for the fallback area.

use super::plan::Step;

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

/// "section 2 (Sallen-Key, f_n 33.7 kHz, Q 0.710): unity-gain amplifier" →
/// ["section 2 · Sallen-Key", "f_n 33.7 kHz, Q 0.710"]: the model's own words, split in two
/// lines; nothing without the "name (details): role" form.
pub(super) fn caption(purpose: &str) -> Vec<String> {
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
