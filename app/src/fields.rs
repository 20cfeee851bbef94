//! The field model: what one input of the form is (`Field`: its request path, label, kind,
//! step and group), the four steps of the page (`Step`), what a field holds (`Kind`), which
//! fields apply given the others (`Field::applies`), and the form's texts (`Values`).
//!
//! The fields themselves are listed in the field table (`FIELDS`). Kept free of Leptos and
//! the browser so the rules are tested on the host.

use std::collections::BTreeMap;

use rangefit_engine::units::Quantity;

/// The four steps of the page, in order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Step {
    Sensor,
    Converter,
    Parts,
    Design,
}

impl Step {
    pub const ALL: [Step; 4] = [Step::Sensor, Step::Converter, Step::Parts, Step::Design];

    /// Stable name used in `data-testid="step-<id>"` and element ids.
    pub fn id(self) -> &'static str {
        match self {
            Step::Sensor => "sensor",
            Step::Converter => "converter",
            Step::Parts => "parts",
            Step::Design => "design",
        }
    }

    pub fn title(self) -> &'static str {
        match self {
            Step::Sensor => "The sensor",
            Step::Converter => "The converter input",
            Step::Parts => "Power and parts",
            Step::Design => "The design",
        }
    }

    pub fn number(self) -> usize {
        Step::ALL.iter().position(|s| *s == self).unwrap_or(0) + 1
    }

    pub fn next(self) -> Option<Step> {
        Step::ALL.get(self.number()).copied()
    }

    pub fn previous(self) -> Option<Step> {
        self.number().checked_sub(2).and_then(|i| Step::ALL.get(i)).copied()
    }
}

/// What a field holds and how its text becomes JSON.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Kind {
    /// A physical value read by `units::parse`; `percent` fields are shown as "5 %".
    Quantity {
        q: Quantity,
        percent: bool,
    },
    /// A whole number (bits, Monte Carlo builds, seed); the engine checks its range.
    Whole,
    /// A plain number in a unit the user names (the measurand's values).
    Number,
    Text,
    LongText,
    /// One of a fixed set of values: (value, label).
    Choice(&'static [(&'static str, &'static str)]),
    Flag,
    /// Several voltages separated by commas (the supply rails).
    Rails,
    /// A level the engine reads itself: a plain number, a percentage or decibels
    /// ("0.1 dB", "-40 dB", "1 %"); sent as typed, the engine names what is wrong.
    Level,
}

/// One input of the form.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Field {
    /// Request path, also the `data-testid` suffix.
    pub path: &'static str,
    pub label: &'static str,
    pub kind: Kind,
    pub step: Step,
    /// Heading of the group of fields it sits in.
    pub group: &'static str,
    pub required: bool,
    /// One line under the field: what it means, in plain words.
    pub help: &'static str,
}

impl Field {
    /// The element id of the input (ids must not contain dots for easy CSS).
    pub fn input_id(&self) -> String {
        format!("f-{}", self.path.replace(['.', '_'], "-"))
    }

    pub fn quantity(&self) -> Option<Quantity> {
        match self.kind {
            Kind::Quantity { q, .. } => Some(q),
            Kind::Rails => Some(Quantity::Voltage),
            _ => None,
        }
    }

    /// True for the amplifier's figures, which only count when the user gives them.
    pub fn is_amplifier_figure(&self) -> bool {
        self.path.starts_with("amplifier.")
    }

    /// The field's kind for a sensor of kind `sensor` (the `source.kind` text): the
    /// sensor's extremes are currents for a current loop.
    pub fn kind_for(&self, sensor: &str) -> Kind {
        match (self.path, self.kind) {
            ("source.min" | "source.max", Kind::Quantity { percent, .. })
                if sensor == "current_loop" || sensor == "photodiode" =>
            {
                Kind::Quantity { q: Quantity::Current, percent }
            }
            _ => self.kind,
        }
    }

    /// Whether the field applies given the other fields' texts: the amplifier's figures
    /// only when the user gives them, the modulator rate only for an oversampling
    /// converter, the sampling figures only for a sampling one, the filter's settings only
    /// when a filter is wanted. A field that does not apply is hidden and left out of the
    /// request, but its text is kept.
    pub fn applies(&self, text: impl Fn(&str) -> String) -> bool {
        let oversampling = || text("destination.converter") == "oversampling";
        let current_loop = || text("source.kind") == "current_loop";
        match self.path {
            "source.burden_max" | "source.fault_low" | "source.fault_high" => current_loop(),
            "source.capacitance" => matches!(text("source.kind").as_str(), "high_impedance" | "photodiode"),
            "source.coupling" | "source.impedance" | "source.band_low" => {
                !current_loop() && !matches!(text("source.kind").as_str(), "photodiode" | "bridge")
            }
            "source.dark_current" => text("source.kind") == "photodiode",
            "source.common_mode_min" | "source.common_mode_max" => text("source.kind") == "differential",
            "source.front_end" => matches!(text("source.kind").as_str(), "differential" | "bridge"),
            "source.excitation"
            | "source.sensitivity"
            | "source.bridge_resistance"
            | "source.active_arms"
            | "source.ratiometric"
            | "source.zero_balance" => text("source.kind") == "bridge",
            "destination.modulator_rate" => oversampling(),
            "destination.acquisition_time" | "destination.input_capacitance" => !oversampling(),
            "filter.response" => true,
            p if p.starts_with("filter.") => text("filter.response") != "none",
            _ => !self.is_amplifier_figure() || text("amplifier") == AMP_GIVEN,
        }
    }
}

/// Value of the `amplifier` choice: the engine assumes a generic class and states what
/// the amplifier must provide.
pub const AMP_STATE: &str = "state";
/// Value of the `amplifier` choice: the user gives the figures they know.
pub const AMP_GIVEN: &str = "given";

/// The kind of a physical value of quantity `q`.
pub const fn q(q: Quantity) -> Kind {
    Kind::Quantity { q, percent: false }
}

/// The kind of a ratio shown as a percentage ("5 %").
pub const fn pct() -> Kind {
    Kind::Quantity { q: Quantity::Ratio, percent: true }
}

/// The texts of the form, one per field of the field table (`FIELDS`), keyed by path.
pub type Values = BTreeMap<&'static str, String>;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_go_forward_and_back() {
        assert_eq!(Step::Sensor.next(), Some(Step::Converter));
        assert_eq!(Step::Design.next(), None);
        assert_eq!(Step::Sensor.previous(), None);
        assert_eq!(Step::Design.previous(), Some(Step::Parts));
        assert_eq!(Step::Parts.number(), 3);
    }
}
