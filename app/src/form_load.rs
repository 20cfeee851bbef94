//! Request JSON into the form: the texts of a new design (the engine's defaults), of a
//! request given as JSON (a demo, a saved design) or of a normalised request (a share link),
//! the text a value is shown with, and the display name of a request JSON.
//!
//! Values are written with the engine's `units::format_sig`, with the fewest digits that
//! read back as the same number; nothing here parses or computes a value itself.

use rangefit_engine::request::{
    AnalysisOptions, Parts, Request, DEFAULT_BITS, DEFAULT_DESTINATION_IMPEDANCE, DEFAULT_HEADROOM,
    DEFAULT_INJECTION_LIMIT, DEFAULT_INPUT_CAPACITANCE, DEFAULT_MAX_ORDER,
};
use rangefit_engine::units::{self, Quantity};
use serde_json::Value;

use crate::field_table::FIELDS;
use crate::fields::{pct, q, Kind, Values, AMP_GIVEN, AMP_STATE};

/// The text a value is shown with: the engine's formatting with the fewest significant
/// digits that reads back as exactly the same number, so loading a request into the form
/// never changes it.
pub fn value_text(v: f64, kind: Kind) -> String {
    let Kind::Quantity { q, percent } = kind else { return Value::from(v).to_string() };
    if percent {
        for sig in 1..=17 {
            let text = units::format_percent_sig(v, sig);
            if units::parse(&text, q) == Ok(v) {
                return text;
            }
        }
    }
    for sig in 3..=17 {
        let text = units::format_sig(v, q, sig);
        if units::parse(&text, q) == Ok(v) {
            return text;
        }
    }
    Value::from(v).to_string()
}

/// The form of a new design: required fields empty, every optional field showing the
/// default the engine would use (the amplifier's figures come from its class and are
/// shown as placeholders instead).
pub fn new_design() -> Values {
    let parts = Parts::default();
    let analysis = AnalysisOptions::default();
    let mut v = Values::new();
    for f in FIELDS {
        v.insert(f.path, String::new());
    }
    let mut put = |path: &'static str, text: String| {
        v.insert(path, text);
    };
    put("name", "New design".into());
    put("source.kind", "single_ended".into());
    put("source.coupling", "dc".into());
    put("source.front_end", "auto".into());
    put("source.impedance", value_text(0.0, q(Quantity::Resistance)));
    put("destination.headroom", value_text(DEFAULT_HEADROOM, pct()));
    put("destination.bits", DEFAULT_BITS.to_string());
    put("destination.impedance", value_text(DEFAULT_DESTINATION_IMPEDANCE, q(Quantity::Resistance)));
    put("destination.converter", "unknown".into());
    put("destination.input_capacitance", value_text(DEFAULT_INPUT_CAPACITANCE, q(Quantity::Capacitance)));
    put("destination.injection_limit", value_text(DEFAULT_INJECTION_LIMIT, q(Quantity::Current)));
    put("filter.response", "flat".into());
    put("filter.topology", "sallen_key".into());
    put("filter.max_order", DEFAULT_MAX_ORDER.to_string());
    put("keep_polarity", flag_text(true));
    put("parts.resistor_series", parts.resistor_series.name().to_string());
    put("parts.resistor_tolerance", value_text(parts.resistor_tolerance, pct()));
    put("parts.resistor_min", value_text(parts.resistor_min, q(Quantity::Resistance)));
    put("parts.resistor_max", value_text(parts.resistor_max, q(Quantity::Resistance)));
    put("parts.capacitor_series", parts.capacitor_series.name().to_string());
    put("parts.capacitor_tolerance", value_text(parts.capacitor_tolerance, pct()));
    put("amplifier", AMP_STATE.into());
    put("analysis.temperature", value_text(analysis.temperature, q(Quantity::Temperature)));
    put("analysis.monte_carlo_runs", analysis.monte_carlo_runs.to_string());
    put("analysis.seed", analysis.seed.to_string());
    v
}

/// The form showing a request given as JSON (a demo, a saved design, a link's request).
/// Texts are kept as written; numbers are written with their unit; absent optional fields
/// show their defaults as for a new design. Values of the wrong JSON type are shown as
/// their JSON text so the engine reports them under the field.
pub fn from_json(json: &Value) -> Values {
    let mut v = new_design();
    let sensor = lookup(json, "source.kind").and_then(Value::as_str).unwrap_or("single_ended").to_string();
    for f in FIELDS {
        if f.path == "amplifier" {
            let given =
                json.get("amplifier").and_then(Value::as_object).is_some_and(|m| m.values().any(|x| !x.is_null()));
            v.insert(f.path, if given { AMP_GIVEN } else { AMP_STATE }.into());
            continue;
        }
        let Some(x) = lookup(json, f.path) else {
            if f.path == "name" {
                v.insert(f.path, String::new());
            }
            continue;
        };
        let text = match (x, f.kind_for(&sensor)) {
            (Value::String(s), _) => s.clone(),
            (Value::Bool(b), _) => flag_text(*b),
            (Value::Number(n), kind) => match n.as_f64() {
                Some(x) if !matches!(kind, Kind::Whole | Kind::Number) => value_text(x, kind),
                _ => n.to_string(),
            },
            (Value::Array(items), Kind::Rails) => items
                .iter()
                .map(|item| match item {
                    Value::String(s) => s.clone(),
                    Value::Number(n) => {
                        n.as_f64().map(|x| value_text(x, q(Quantity::Voltage))).unwrap_or_else(|| n.to_string())
                    }
                    other => other.to_string(),
                })
                .collect::<Vec<_>>()
                .join(", "),
            (other, Kind::Rails) => match other {
                Value::Number(n) => {
                    n.as_f64().map(|x| value_text(x, q(Quantity::Voltage))).unwrap_or_else(|| n.to_string())
                }
                _ => other.to_string(),
            },
            (other, _) => other.to_string(),
        };
        v.insert(f.path, text);
    }
    v
}

/// The form showing a normalised request (every value in SI units): used for share links,
/// whose request the engine has already read.
pub fn from_request(req: &Request) -> Values {
    let json = serde_json::to_value(req).unwrap_or(Value::Null);
    from_json(&json)
}

/// The display name of a request JSON: its `name`, or what the engine calls an unnamed one.
pub fn name_of(json: &Value) -> String {
    match json.get("name").and_then(Value::as_str).map(str::trim) {
        Some(n) if !n.is_empty() => n.to_string(),
        _ => "Untitled design".to_string(),
    }
}

fn flag_text(b: bool) -> String {
    if b {
        "true".into()
    } else {
        "false".into()
    }
}

fn lookup<'a>(json: &'a Value, path: &str) -> Option<&'a Value> {
    let mut at = json;
    for key in path.split('.') {
        at = at.get(key)?;
    }
    (!at.is_null()).then_some(at)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn value_text_round_trips_and_reads_well() {
        let cases = [
            (1.16, q(Quantity::Voltage), "1.16 V"),
            (192e3, q(Quantity::Frequency), "192 kHz"),
            (0.05, pct(), "5 %"),
            (0.001, pct(), "0.1 %"),
            (1e6, q(Quantity::Resistance), "1 MΩ"),
            (300.0, q(Quantity::Temperature), "300 K"),
        ];
        for (x, kind, want) in cases {
            assert_eq!(value_text(x, kind), want);
        }
        for x in [0.1 + 0.2, 1.0 / 3.0, 4.7e3 * 1.0000001, -2.5, 1e-7 * 3.3] {
            let t = value_text(x, q(Quantity::Voltage));
            assert_eq!(units::parse(&t, Quantity::Voltage), Ok(x), "{t}");
        }
    }
}
