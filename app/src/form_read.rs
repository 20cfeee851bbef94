//! The form into a request: every value checked with the engine's `units::parse` (its
//! message is the text under the field), the request JSON assembled from the fields that
//! apply (texts as typed) and read by `Request::from_value`, whose field-named errors land
//! under their fields (`Validation`).

use std::collections::BTreeMap;

use rangefit_engine::request::Request;
use rangefit_engine::units::{self, Quantity};
use serde_json::{Map, Number, Value};

use crate::field_table::{field, FIELDS};
use crate::fields::{Kind, Step, Values, AMP_GIVEN};

/// The result of reading the form.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Validation {
    /// The request as JSON, texts as typed (what is saved and restored).
    pub json: Value,
    /// Message under each field that holds a bad value, by path.
    pub errors: BTreeMap<&'static str, String>,
    /// Required fields still empty.
    pub missing: Vec<&'static str>,
    /// A problem that belongs to no single field.
    pub general: Option<String>,
    /// The request, when the form is complete and every value is good.
    pub request: Option<Request>,
}

impl Validation {
    pub fn is_complete(&self) -> bool {
        self.request.is_some()
    }

    /// Bad and missing fields of one step.
    pub fn problems_in(&self, step: Step) -> (usize, usize) {
        let in_step = |p: &str| field(p).is_some_and(|f| f.step == step);
        (self.errors.keys().filter(|p| in_step(p)).count(), self.missing.iter().filter(|p| in_step(p)).count())
    }
}

/// Reads the form: checks every value with the engine's parser, assembles the request JSON
/// and reads it with `Request::from_value`.
pub fn validate(values: &Values) -> Validation {
    let text = |path: &str| values.get(path).map(|s| s.trim()).unwrap_or("");
    let mut root = Map::new();
    root.insert("version".into(), Value::from(rangefit_engine::request::CURRENT_VERSION));
    let mut out = Validation::default();
    let measurand_used =
        FIELDS.iter().filter(|f| f.path.starts_with("source.measurand.")).any(|f| !text(f.path).is_empty());

    for f in FIELDS {
        let t = text(f.path);
        if f.path == "amplifier" || !f.applies(|p| text(p).to_string()) {
            continue;
        }
        if t.is_empty() {
            // A bridge's range follows from its sensitivity when left empty.
            let optional_here = text("source.kind") == "bridge" && matches!(f.path, "source.min" | "source.max");
            if (f.required && !optional_here)
                || (measurand_used && f.path.starts_with("source.measurand.") && !f.path.ends_with(".unit"))
            {
                out.missing.push(f.path);
            }
            continue;
        }
        let value = match f.kind_for(text("source.kind")) {
            Kind::Quantity { q, .. } => {
                if let Err(e) = units::parse(t, q) {
                    out.errors.insert(f.path, e.message(q));
                }
                Value::String(t.to_string())
            }
            Kind::Whole => match serde_json::from_str::<Number>(t) {
                Ok(n) => Value::Number(n),
                Err(_) => Value::String(t.to_string()),
            },
            Kind::Number => match serde_json::from_str::<Number>(t) {
                Ok(n) => Value::Number(n),
                Err(_) => {
                    out.errors.insert(
                        f.path,
                        format!(
                            "'{t}' is not a plain number; write a number in the quantity's own unit, \
                            such as 600 or -2.5e3"
                        ),
                    );
                    Value::String(t.to_string())
                }
            },
            Kind::Text | Kind::LongText | Kind::Choice(_) => Value::String(t.to_string()),
            Kind::Level => match serde_json::from_str::<Number>(t) {
                Ok(n) => Value::Number(n),
                Err(_) => Value::String(t.to_string()),
            },
            Kind::Flag => Value::Bool(t == "true"),
            Kind::Rails => {
                let items: Vec<&str> = t.split([',', ';']).map(str::trim).filter(|s| !s.is_empty()).collect();
                for (i, item) in items.iter().enumerate() {
                    if let Err(e) = units::parse(item, Quantity::Voltage) {
                        let which =
                            if items.len() > 1 { format!("rail {} ('{item}'): ", i + 1) } else { String::new() };
                        out.errors.insert(f.path, format!("{which}{}", e.message(Quantity::Voltage)));
                        break;
                    }
                }
                if items.is_empty() {
                    out.missing.push(f.path);
                    continue;
                }
                Value::Array(items.into_iter().map(|s| Value::String(s.to_string())).collect())
            }
        };
        insert_path(&mut root, f.path, value);
    }
    if text("amplifier") == AMP_GIVEN && !root.contains_key("amplifier") {
        root.insert("amplifier".into(), Value::Object(Map::new()));
    }
    out.json = Value::Object(root);

    match Request::from_value(&out.json) {
        Ok(req) if out.errors.is_empty() && out.missing.is_empty() => out.request = Some(req),
        Ok(_) => {}
        Err(e) => match field_of_error(&e.field) {
            Some(path) if out.missing.contains(&path) || out.errors.contains_key(path) => {}
            Some(path) => {
                out.errors.insert(path, e.message);
            }
            None if out.errors.is_empty() && out.missing.is_empty() => out.general = Some(e.to_string()),
            None => {}
        },
    }
    out
}

fn insert_path(root: &mut Map<String, Value>, path: &str, value: Value) {
    let mut keys = path.split('.').peekable();
    let mut at = root;
    while let Some(key) = keys.next() {
        if keys.peek().is_none() {
            at.insert(key.to_string(), value);
            return;
        }
        let entry = at.entry(key.to_string()).or_insert_with(|| Value::Object(Map::new()));
        if !entry.is_object() {
            *entry = Value::Object(Map::new());
        }
        let Value::Object(next) = entry else { return };
        at = next;
    }
}

/// The field a request error belongs to: `supplies[1]` → `supplies`.
fn field_of_error(path: &str) -> Option<&'static str> {
    let base = path.split('[').next().unwrap_or(path);
    field(base).map(|f| f.path)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::form_load::{from_json, from_request, new_design};
    use rangefit_engine::{demos, design, share};

    fn demo_json(i: usize) -> Value {
        serde_json::from_str(demos::ALL[i].json).expect("demo is JSON")
    }

    #[test]
    fn every_demo_reads_back_to_the_same_request() {
        for (i, demo) in demos::ALL.iter().enumerate() {
            let json = demo_json(i);
            let direct = Request::from_value(&json).expect("demo valid");
            let v = validate(&from_json(&json));
            assert_eq!(v.errors, BTreeMap::new(), "demo {}", demo.id);
            assert_eq!(v.missing, Vec::<&str>::new(), "demo {}", demo.id);
            assert_eq!(v.request.as_ref(), Some(&direct), "demo {} through the form", demo.id);
        }
    }

    #[test]
    fn a_link_request_reads_back_exactly() {
        // Awkward values that three significant digits would round.
        let mut json = demo_json(1);
        json["source"]["min"] = Value::from(0.123456789);
        json["source"]["max"] = Value::from(4.987654321);
        json["destination"]["sample_rate"] = Value::from(1234.5678);
        json["parts"]["resistor_tolerance"] = Value::from(0.0007);
        let req = Request::from_value(&json).expect("valid");
        let linked = share::decode(&share::encode(&req)).expect("link decodes");
        let v = validate(&from_request(&linked));
        assert_eq!(v.request.as_ref(), Some(&linked));
        assert_eq!(design(v.request.as_ref().unwrap()).parts, design(&req).parts);
    }

    #[test]
    fn every_demo_reads_back_through_a_link() {
        for (i, demo) in demos::ALL.iter().enumerate() {
            let req = Request::from_value(&demo_json(i)).expect("demo valid");
            let linked = share::decode(&share::encode(&req)).expect("link decodes");
            let v = validate(&from_request(&linked));
            assert_eq!(v.errors, BTreeMap::new(), "demo {}", demo.id);
            assert_eq!(v.request.as_ref(), Some(&linked), "demo {} through a link", demo.id);
        }
    }

    #[test]
    fn a_new_design_is_incomplete_and_names_what_is_missing() {
        let v = validate(&new_design());
        assert!(v.request.is_none());
        assert!(v.errors.is_empty(), "{:?}", v.errors);
        assert_eq!(
            v.missing,
            vec![
                "source.min",
                "source.max",
                "destination.min",
                "destination.max",
                "destination.sample_rate",
                "supplies"
            ]
        );
        assert_eq!(v.problems_in(Step::Sensor), (0, 2));
        assert_eq!(v.problems_in(Step::Converter), (0, 3));
        assert_eq!(v.problems_in(Step::Parts), (0, 1));
    }

    #[test]
    fn a_filled_new_design_gives_the_engine_defaults() {
        let mut v = new_design();
        for (p, t) in [
            ("source.min", "0.5 V"),
            ("source.max", "4.5 V"),
            ("destination.min", "0"),
            ("destination.max", "3.3"),
            ("destination.sample_rate", "1k"),
            ("supplies", "5, 3.3"),
        ] {
            v.insert(p, t.into());
        }
        let got = validate(&v).request.expect("complete");
        let minimal = serde_json::json!({
            "name": "New design",
            "source": {"min": 0.5, "max": 4.5},
            "destination": {"min": 0, "max": 3.3, "sample_rate": 1000},
            "supplies": [5, 3.3]
        });
        assert_eq!(got, Request::from_value(&minimal).expect("valid"));
    }

    #[test]
    fn bad_values_are_reported_under_their_fields() {
        let mut v = from_json(&demo_json(0));
        v.insert("source.min", "1.2 Ω".into());
        v.insert("destination.sample_rate", "fast".into());
        v.insert("supplies", "3.3, 5 A".into());
        v.insert("destination.bits", "12.5".into());
        let r = validate(&v);
        assert!(r.request.is_none());
        assert!(r.errors["source.min"].contains("resistance unit"), "{}", r.errors["source.min"]);
        assert!(r.errors["destination.sample_rate"].contains("frequency"), "{}", r.errors["destination.sample_rate"]);
        assert!(r.errors["supplies"].starts_with("rail 2"), "{}", r.errors["supplies"]);
        assert!(r.errors["destination.bits"].contains("whole number"), "{}", r.errors["destination.bits"]);
    }

    #[test]
    fn engine_rules_land_on_the_field_they_name() {
        let mut v = from_json(&demo_json(0));
        v.insert("source.band_low", String::new());
        let r = validate(&v);
        assert!(r.errors["source.band_low"].contains("required for AC"), "{:?}", r.errors);
        let mut v = from_json(&demo_json(1));
        v.insert("source.max", "0.1".into());
        let r = validate(&v);
        assert!(r.errors["source.max"].contains("below"), "{:?}", r.errors);
    }

    #[test]
    fn amplifier_figures_count_only_when_given() {
        let mut v = from_json(&demo_json(0));
        v.insert("amplifier.gbw", "not a number".into());
        assert!(validate(&v).request.is_some(), "ignored while Rangefit states the requirements");
        v.insert("amplifier", AMP_GIVEN.into());
        assert!(validate(&v).errors.contains_key("amplifier.gbw"));
        v.insert("amplifier.gbw", "1 MHz".into());
        let req = validate(&v).request.expect("valid");
        assert_eq!(req.amplifier.gbw, Some(1e6));
        assert_eq!(from_json(&validate(&v).json)["amplifier"], AMP_GIVEN);
    }

    #[test]
    fn a_half_filled_measurand_asks_for_the_rest() {
        let mut v = from_json(&demo_json(1));
        v.insert("source.measurand.name", "pressure".into());
        let r = validate(&v);
        assert!(r.missing.contains(&"source.measurand.at_min") && r.missing.contains(&"source.measurand.at_max"));
        v.insert("source.measurand.at_min", "0".into());
        v.insert("source.measurand.at_max", "six hundred".into());
        assert!(validate(&v).errors.contains_key("source.measurand.at_max"));
        v.insert("source.measurand.at_max", "600".into());
        let req = validate(&v).request.expect("complete");
        assert_eq!(req.source.measurand.map(|m| m.at_max), Some(600.0));
    }

    #[test]
    fn converter_and_filter_fields_apply_only_where_they_mean_something() {
        let mut v = from_json(&demo_json(0));
        // A modulator rate typed for a sampling converter is kept in the form, not sent.
        v.insert("destination.modulator_rate", "3.072 MHz".into());
        let r = validate(&v);
        assert!(r.request.is_some(), "{:?}", r.errors);
        assert!(r.json["destination"].get("modulator_rate").is_none());
        v.insert("destination.converter", "oversampling".into());
        let req = validate(&v).request.expect("complete");
        assert_eq!(req.destination.modulator_rate, Some(3.072e6));
        v.insert("destination.modulator_rate", String::new());
        assert!(
            validate(&v).errors["destination.modulator_rate"].contains("required"),
            "the engine's rule lands under the field"
        );
        v.insert("destination.modulator_rate", "3.072 MHz".into());
        // Levels go to the engine as typed; its message lands under the field.
        v.insert("filter.out_of_band_level", "-40 dB".into());
        v.insert("filter.passband_error", "0.2".into());
        let req = validate(&v).request.expect("complete");
        assert!((req.filter.out_of_band_level - 0.01).abs() < 1e-12, "{}", req.filter.out_of_band_level);
        assert_eq!(req.filter.passband_error, 0.2);
        v.insert("filter.out_of_band_level", "+6 dB".into());
        assert!(validate(&v).errors.contains_key("filter.out_of_band_level"));
        // No filter: its settings are left out, whatever they hold.
        v.insert("filter.response", "none".into());
        v.insert("filter.order", "99".into());
        let r = validate(&v);
        assert!(r.request.is_some(), "{:?}", r.errors);
        assert_eq!(r.json["filter"], serde_json::json!({"response": "none"}));
    }

    #[test]
    fn the_front_end_applies_to_pairs_and_bridges_only() {
        let bee = rangefit_engine::demos::ALL.iter().position(|d| d.id == "beehive-scale").expect("beehive demo");
        let mut v = from_json(&demo_json(bee));
        assert_eq!(v["source.front_end"], "auto", "a bridge shows the front-end choice at its default");
        v.insert("source.front_end", "difference".into());
        let req = validate(&v).request.expect("complete");
        assert_eq!(req.source.front_end, rangefit_engine::request::FrontEnd::Difference);
        // A single-ended sensor keeps the text but does not send it (the engine refuses it there).
        let mut v = from_json(&demo_json(0));
        v.insert("source.front_end", "instrumentation".into());
        let r = validate(&v);
        assert!(r.request.is_some(), "{:?}", r.errors);
        assert!(r.json["source"].get("front_end").is_none());
    }
}
