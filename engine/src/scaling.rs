//! Back from converter codes to the sensor's quantity, for the firmware.
//!
//! The converter is taken as ideal and straight-binary: code `c` stands for the input
//! `destination.min + c·LSB` with `LSB = span / 2^bits` (its own offset and gain errors
//! belong to its datasheet and are removed by the same calibration as the chain's). With the
//! rounded design's mapping `y = gain·x + offset` this gives
//!
//! `value = (code − c0) × k`, with `k = LSB / gain` and `c0 = (offset − destination.min) / LSB`,
//!
//! in sensor volts; with `source.measurand` the same form in the measurand's unit. For AC
//! coupling the sensor's DC level is blocked and not observable: `c0` is placed so that the
//! rest code maps to the middle of the sensor's range, and only excursions are meaningful.
//!
//! Calibration: measuring two known inputs and fitting `c0` and `k` removes the chain's gain
//! and offset errors entirely (the chain is linear); what remains is noise, drift with
//! temperature and time, and the converter's own nonlinearity.

use serde::Serialize;

use crate::analysis::Analysis;
use crate::predict::Predicted;
use crate::request::{Coupling, Request};

/// Scaling of one quantity: `value = (code − c0) × k`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Linear {
    pub name: String,
    pub unit: String,
    pub c0: f64,
    pub k: f64,
    /// Codes the quantity's extremes land on (rounded, clamped to the converter's codes).
    pub code_at_min: i64,
    pub code_at_max: i64,
    /// The quantity's extremes.
    pub at_min: f64,
    pub at_max: f64,
    /// Quantity per code (|k|).
    pub resolution: f64,
}

/// Everything the firmware needs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Scaling {
    pub bits: u32,
    pub lsb: f64,
    pub max_code: i64,
    /// In sensor volts.
    pub sensor: Linear,
    /// In the measurand's unit, when the request names one.
    pub measurand: Option<Linear>,
    /// Worst-case error of the uncalibrated chain at the sensor's extremes, in codes
    /// (part tolerances, amplifier offset and bias currents).
    pub uncalibrated_error_codes: f64,
    /// What a two-point calibration leaves: the chain's rms noise, in codes.
    pub calibrated_noise_codes: f64,
    pub notes: Vec<String>,
}

/// The scaling of a design, when it has a prediction.
pub fn scaling(req: &Request, p: &Predicted, analysis: Option<&Analysis>) -> Option<Scaling> {
    let dst = &req.destination;
    let s = &req.source;
    let bits = dst.bits;
    let lsb = dst.lsb();
    let max_code = (1i64 << bits.min(62)) - 1;
    if !(p.gain.abs() > 0.0 && lsb > 0.0) {
        return None;
    }
    let k = lsb / p.gain;
    let mut c0 = (p.offset - dst.min) / lsb;
    if s.coupling == Coupling::Ac {
        // Rest code ↔ the middle of the sensor's range.
        c0 -= 0.5 * (s.min + s.max) / k;
    }
    let code = |y: f64| (((y - dst.min) / lsb).round() as i64).clamp(0, max_code);
    let sensor = Linear {
        name: "sensor output".to_string(),
        unit: "V".to_string(),
        c0,
        k,
        code_at_min: code(p.output_at_min),
        code_at_max: code(p.output_at_max),
        at_min: s.min,
        at_max: s.max,
        resolution: k.abs(),
    };
    let measurand = s.measurand.as_ref().map(|m| {
        // q = at_min + (x − s.min)·slope, x = (code − c0)·k  ⇒  q = (code − c0q)·kq.
        let slope = (m.at_max - m.at_min) / (s.max - s.min);
        let kq = k * slope;
        let c0q = c0 - (m.at_min - s.min * slope) / kq;
        Linear {
            name: m.name.clone(),
            unit: m.unit.clone(),
            c0: c0q,
            k: kq,
            code_at_min: sensor.code_at_min,
            code_at_max: sensor.code_at_max,
            at_min: m.at_min,
            at_max: m.at_max,
            resolution: kq.abs(),
        }
    });
    let (uncal, noise) = match analysis {
        Some(a) => {
            let wc = &a.tolerance.worst_case;
            let e_min =
                (wc.output_at_min[0] - p.output_at_min).abs().max((wc.output_at_min[1] - p.output_at_min).abs());
            let e_max =
                (wc.output_at_max[0] - p.output_at_max).abs().max((wc.output_at_max[1] - p.output_at_max).abs());
            (e_min.max(e_max) / lsb, a.noise.output_rms / lsb)
        }
        None => (f64::NAN, f64::NAN),
    };
    let mut notes = vec![
        "Codes assume an ideal straight-binary converter: code c stands for destination.min + c·LSB.".to_string(),
        "A two-point calibration (two known inputs, fit c0 and k) removes the chain's gain and offset errors; noise, drift with temperature and time, and the converter's nonlinearity remain.".to_string(),
    ];
    if s.coupling == Coupling::Ac {
        notes.push("AC coupling: the sensor's DC level is blocked; c0 maps the rest code to the middle of the sensor's range, and only excursions from it are measured.".to_string());
    }
    Some(Scaling {
        bits,
        lsb,
        max_code,
        sensor,
        measurand,
        uncalibrated_error_codes: uncal,
        calibrated_noise_codes: noise,
        notes,
    })
}

/// A C header with plain `#define`s for the firmware.
pub fn c_header(req: &Request, sc: &Scaling) -> String {
    let guard = "RANGEFIT_SCALING_H";
    let name = comment_safe(&req.name);
    let mut out = format!(
        "/* Converter code to sensor quantity: value = (code - C0) * K.\n * Design: {name}\n * Produced by rangefit-engine {} from a version-{} request.\n * Calibrate by measuring two known inputs and replacing C0 and K. */\n#ifndef {guard}\n#define {guard}\n\n",
        env!("CARGO_PKG_VERSION"),
        req.version
    );
    out.push_str(&format!("#define RANGEFIT_BITS {}\n#define RANGEFIT_LSB_VOLTS {:e}\n", sc.bits, sc.lsb));
    let mut block = |prefix: &str, l: &Linear| {
        out.push_str(&format!(
            "\n/* {} in {} */\n",
            comment_safe(&l.name),
            if l.unit.is_empty() { "its unit".to_string() } else { comment_safe(&l.unit) }
        ));
        out.push_str(&format!("#define {prefix}_C0 {:e}\n#define {prefix}_K {:e}\n", l.c0, l.k));
        out.push_str(&format!(
            "#define {prefix}_CODE_AT_MIN {}\n#define {prefix}_CODE_AT_MAX {}\n",
            l.code_at_min, l.code_at_max
        ));
    };
    block("RANGEFIT_SENSOR", &sc.sensor);
    if let Some(m) = &sc.measurand {
        block("RANGEFIT_MEASURAND", m);
    }
    out.push_str(&format!("\n#endif /* {guard} */\n"));
    out
}

/// Text safe inside a C block comment.
fn comment_safe(s: &str) -> String {
    // Break comment delimiters and trigraphs (C99 reads "??/" as a backslash).
    s.replace("*/", "* /")
        .replace("/*", "/ *")
        .replace("??", "? ?")
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect()
}
