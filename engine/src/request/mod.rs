//! The request: the public, versioned contract between a user (form, share link, script)
//! and the engine.
//!
//! A request is read from JSON where every physical value may be a plain number in SI base
//! units or a string with a unit (`"4.7k"`, `"20 Hz"`, `"-250 mV"`). Reading normalises it:
//! values become numbers in SI base units and every optional field receives its stated
//! default, so the normalised request printed by `rangefit design` can be read back as is.
//!
//! Reading fails only for malformed input (wrong JSON, a value that does not parse, an
//! unknown field, an unknown series). Requests that are well formed but cannot be built
//! (zero span, band above Nyquist, range beyond the rails) are accepted here and reported
//! as error checks by [`crate::design`], so the user sees everything wrong at once.
//!
//! The model and its reading are split by part of the request: [`source`](Source) (the sensor),
//! [`destination`](Destination) (the converter input and the anti-alias filter), the parts,
//! amplifier and analysis options, and the JSON-reading helpers they share.

mod destination;
mod json;
mod parts;
mod source;

pub use destination::{full_range_db, levels_of, lsb_of};
pub use destination::{
    ConverterKind, Destination, FilterSpec, FilterTopology, ResponseKind, DEFAULT_ACQUISITION_FRACTION, DEFAULT_BITS,
    DEFAULT_DESTINATION_IMPEDANCE, DEFAULT_HEADROOM, DEFAULT_INJECTION_LIMIT, DEFAULT_INPUT_CAPACITANCE,
    DEFAULT_MAX_ORDER, DEFAULT_PASSBAND_ERROR_DB, DEFAULT_REFERENCE_TOLERANCE, ORDER_LIMIT, STEEP_PASSBAND_ERROR_DB,
};
pub use parts::{AmplifierSpec, AnalysisOptions, Parts, AMPLIFIER_FIGURES};
pub use source::{
    BridgeSpec, Coupling, FrontEnd, LoopSpec, Measurand, Source, SourceKind, DEFAULT_BAND_FRACTION_OF_FS,
    DEFAULT_BURDEN_MAX, DEFAULT_ZERO_BALANCE, NAMUR_FAULT_HIGH, NAMUR_FAULT_LOW,
};

use serde::{Deserialize, Serialize};
use serde_json::Value;
use std::fmt;

use crate::units::Quantity;
use destination::{read_destination, read_filter};
use json::{field_err, quantity, Obj};
use parts::{read_amplifier, read_analysis, read_parts};
use source::read_source;

/// The newest request version this build reads and writes.
pub const CURRENT_VERSION: u32 = 1;

/// A normalised design request. All physical values are in SI base units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Request {
    pub version: u32,
    pub name: String,
    #[serde(default)]
    pub notes: String,
    pub source: Source,
    pub destination: Destination,
    /// The rails available, in volts (e.g. `[5]`, `[12, -12]`).
    pub supplies: Vec<f64>,
    /// Each rail's tolerance as a fraction, in the order of `supplies` (one value applies to
    /// every rail). Empty: [`DEFAULT_SUPPLY_TOLERANCE`] for each.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub supply_tolerance: Vec<f64>,
    pub parts: Parts,
    /// Amplifier facts the user knows; absent fields are taken from a generic class.
    #[serde(default)]
    pub amplifier: AmplifierSpec,
    /// The output rises when the sensor's signal rises.
    pub keep_polarity: bool,
    /// Options of the analyses.
    #[serde(default)]
    pub analysis: AnalysisOptions,
    /// The anti-alias filter wanted.
    #[serde(default)]
    pub filter: FilterSpec,
}

/// A malformed request: which field, and what is wrong with it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RequestError {
    /// Dotted path of the field, e.g. `source.band_low`; empty for the whole document.
    pub field: String,
    pub message: String,
}

impl fmt::Display for RequestError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.field.is_empty() {
            write!(f, "{}", self.message)
        } else {
            write!(f, "{}: {}", self.field, self.message)
        }
    }
}

impl std::error::Error for RequestError {}

impl Request {
    /// Reads and normalises a request from JSON text.
    pub fn from_json(text: &str) -> Result<Request, RequestError> {
        let value: Value = serde_json::from_str(text)
            .map_err(|e| RequestError { field: String::new(), message: format!("not valid JSON ({e})") })?;
        Request::from_value(&value)
    }

    /// Reads and normalises a request from a parsed JSON value.
    pub fn from_value(value: &Value) -> Result<Request, RequestError> {
        let top = Obj::new("", value)?;
        let version = match top.get("version") {
            None => CURRENT_VERSION,
            Some(v) => {
                let n = v.as_u64().ok_or_else(|| top.err("version", "must be a whole number such as 1"))?;
                if n == 0 || n > CURRENT_VERSION as u64 {
                    return Err(top.err(
                        "version",
                        &format!(
                            "this request is version {n}; this build of Rangefit reads versions 1 to {CURRENT_VERSION}"
                        ),
                    ));
                }
                n as u32
            }
        };
        let name = top.string("name")?.unwrap_or_else(|| "Untitled design".to_string());
        let notes = top.string("notes")?.unwrap_or_default();

        let dest_v = top.required("destination")?;
        let destination = read_destination(dest_v)?;
        let supplies = read_supplies(top.required("supplies")?)?;
        let supply_tolerance = match top.get("supply_tolerance") {
            None | Some(Value::Null) => Vec::new(),
            Some(v) => read_supply_tolerance(v, supplies.len())?,
        };
        let src_v = top.required("source")?;
        let source = read_source(src_v, &destination, &supplies)?;
        let parts = match top.get("parts") {
            None => Parts::default(),
            Some(v) => read_parts(v)?,
        };
        let amplifier = match top.get("amplifier") {
            None | Some(Value::Null) => AmplifierSpec::default(),
            Some(v) => read_amplifier(v)?,
        };
        let keep_polarity = top.bool("keep_polarity")?.unwrap_or(true);
        let analysis = match top.get("analysis") {
            None => AnalysisOptions::default(),
            Some(v) => read_analysis(v)?,
        };
        let filter = match top.get("filter") {
            None => FilterSpec::default(),
            Some(v) => read_filter(v)?,
        };
        top.finish(&[
            "version",
            "name",
            "notes",
            "source",
            "destination",
            "supplies",
            "supply_tolerance",
            "parts",
            "amplifier",
            "keep_polarity",
            "analysis",
            "filter",
        ])?;
        Ok(Request {
            version,
            name,
            notes,
            source,
            destination,
            supplies,
            supply_tolerance,
            parts,
            amplifier,
            keep_polarity,
            analysis,
            filter,
        })
    }

    /// The normalised request as pretty JSON (the form `rangefit design` prints).
    pub fn to_json(&self) -> String {
        serde_json::to_string_pretty(self).unwrap_or_default()
    }
}

/// Tolerance of a rail when the request gives none: ±5 %. Common practice (the usual
/// allowance of a regulated bench or board rail; the USB 2.0 specification's 4.75–5.25 V
/// bus window is the same ±5 %, from memory).
pub const DEFAULT_SUPPLY_TOLERANCE: f64 = 0.05;

impl Request {
    /// The tolerance of rail `v` (a value of `supplies`), as a fraction.
    pub fn rail_tolerance(&self, v: f64) -> f64 {
        let i = self.supplies.iter().position(|&x| x == v);
        match (self.supply_tolerance.as_slice(), i) {
            ([], _) => DEFAULT_SUPPLY_TOLERANCE,
            ([one], _) => *one,
            (all, Some(i)) => all.get(i).copied().unwrap_or(DEFAULT_SUPPLY_TOLERANCE),
            (_, None) => DEFAULT_SUPPLY_TOLERANCE,
        }
    }
}

fn read_supply_tolerance(v: &Value, rails: usize) -> Result<Vec<f64>, RequestError> {
    let items: Vec<&Value> = match v {
        Value::Array(a) => a.iter().collect(),
        other => vec![other],
    };
    if items.len() != 1 && items.len() != rails {
        return Err(field_err(
            "supply_tolerance",
            &format!("give one tolerance for every rail or one per rail ({rails} here), e.g. \"5 %\" or [0.05, 0.02]"),
        ));
    }
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let path = if items.len() == 1 { "supply_tolerance".to_string() } else { format!("supply_tolerance[{i}]") };
        let t = quantity(&path, item, Quantity::Ratio)?;
        if !(0.0..=0.25).contains(&t) {
            return Err(field_err(&path, "must be a fraction from 0 to 0.25 (e.g. 0.05 or \"5 %\")"));
        }
        out.push(t);
    }
    Ok(out)
}

fn read_supplies(v: &Value) -> Result<Vec<f64>, RequestError> {
    let items: Vec<&Value> = match v {
        Value::Array(a) => a.iter().collect(),
        other => vec![other],
    };
    if items.is_empty() {
        return Err(field_err("supplies", "needs at least one rail, e.g. [3.3] or [12, -12]"));
    }
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let path = format!("supplies[{i}]");
        let x = quantity(&path, item, Quantity::Voltage)?;
        if x == 0.0 {
            return Err(field_err(
                &path,
                "a rail of 0 V is ground, which is always available; list only the other rails",
            ));
        }
        out.push(x);
    }
    if !out.iter().any(|&x| x > 0.0) {
        return Err(field_err("supplies", "needs a positive rail"));
    }
    Ok(out)
}
