//! DC transfer and frequency response of the rounded circuit.
//!
//! * [`dc_transfer`]: the output against the sensor over its whole range and 10 % of the span
//!   beyond each end, so clipping at the amplifier's swing limits shows; plus the DC voltage
//!   of every node at the operating point (sensor at the middle of its range). For AC
//!   coupling the DC sweep is flat by design, so the transfer is the mid-band one: the
//!   operating-point output plus the mid-band gain times the excursion, limited by the output
//!   swing (`kind: "midband"`).
//! * [`ac_response`]: magnitude and phase from the sensor EMF (`VSENSE`) to `adc` at
//!   log-spaced frequencies from well below the lowest corner to ten times the sample rate
//!   (or three times the upper −3 dB point, whichever is higher),
//!   the −3 dB points, the ripple inside the band, and the gain at `band_low`, mid-band and
//!   `band_high`.

use serde::Serialize;

use crate::circuit::Circuit;
use crate::request::{Coupling, Request};
use crate::solve::Solver;

/// One point of the DC transfer.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TransferPoint {
    pub x: f64,
    pub y: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DcAnalysis {
    /// `"dc"` (static sweep) or `"midband"` (AC coupling: DC level plus mid-band gain).
    pub kind: &'static str,
    pub transfer: Vec<TransferPoint>,
    /// Node voltages at the operating point (sensor at the middle of its range).
    pub operating_point: Vec<(String, f64)>,
    /// Source values inside [min, max] at which the output sits at a swing limit.
    pub clipped_in_range: Vec<f64>,
    /// Output limits of the amplifier on its rails.
    pub output_limits: [f64; 2],
}

/// One point of the frequency response.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AcPoint {
    pub f: f64,
    pub mag_db: f64,
    pub phase_deg: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AcAnalysis {
    pub points: Vec<AcPoint>,
    pub f_low_3db: Option<f64>,
    pub f_high_3db: Option<f64>,
    /// Largest minus smallest magnitude over the band, dB.
    pub ripple_db: f64,
    /// Gain in dB at band_low (absent for DC coupling), mid-band and band_high.
    pub gain_band_low_db: Option<f64>,
    pub gain_mid_db: f64,
    pub gain_band_high_db: f64,
    /// The reference frequency the −3 dB points are measured against (0 for DC).
    pub f_mid: f64,
}

/// DC transfer sweep over the source range ±10 % of its span, `points` points.
pub fn dc_transfer(req: &Request, circuit: &Circuit, mid_gain: f64, points: usize) -> DcAnalysis {
    let solver = Solver::new(circuit);
    let s = &req.source;
    let span = s.max - s.min;
    let (x0, x1) = (s.min - 0.1 * span, s.max + 0.1 * span);
    let n = points.max(2);
    let (lo, hi) = circuit.output_limits();
    let mid = 0.5 * (s.min + s.max);
    let op = solver.dc(mid).ok();
    let level = op.as_ref().and_then(|o| o.voltage("adc")).unwrap_or(0.0);
    let mut transfer = Vec::with_capacity(n);
    let mut clipped_in_range = Vec::new();
    for i in 0..n {
        let x = x0 + (x1 - x0) * i as f64 / (n - 1) as f64;
        let (y, clipped) = match s.coupling {
            Coupling::Dc => match solver.dc(x) {
                Ok(sol) => (sol.voltage("adc").unwrap_or(f64::NAN), !sol.clamped.is_empty()),
                Err(_) => (f64::NAN, false),
            },
            Coupling::Ac => {
                let y = level + mid_gain * (x - mid);
                (y.clamp(lo, hi), y < lo || y > hi)
            }
        };
        if clipped && x >= s.min && x <= s.max {
            clipped_in_range.push(x);
        }
        if y.is_finite() {
            transfer.push(TransferPoint { x, y });
        }
    }
    DcAnalysis {
        kind: if s.coupling == Coupling::Dc { "dc" } else { "midband" },
        transfer,
        operating_point: op.map(|o| o.voltages).unwrap_or_default(),
        clipped_in_range,
        output_limits: [lo, hi],
    }
}

/// Frequency response with `points` log-spaced points.
pub fn ac_response(
    req: &Request, circuit: &Circuit, f_low_3db: Option<f64>, f_high_3db: Option<f64>, points: usize,
) -> AcAnalysis {
    let solver = Solver::new(circuit);
    let s = &req.source;
    let fs = req.destination.sample_rate;
    let lowest = [Some(s.band_low), f_low_3db].into_iter().flatten().filter(|&f| f > 0.0).fold(f64::INFINITY, f64::min);
    let f_start = if lowest.is_finite() { lowest / 100.0 } else { (s.band_high / 1e4).max(1e-3) };
    // Far enough to show the roll-off past the sample rate and the upper −3 dB point.
    let f_stop = (10.0 * fs).max(10.0 * s.band_high).max(3.0 * f_high_3db.unwrap_or(0.0)).max(f_start * 100.0);
    let n = points.max(2);
    let db = |h: num_complex::Complex<f64>| 20.0 * h.norm().max(1e-300).log10();
    let mut out = Vec::with_capacity(n);
    for i in 0..n {
        let f = f_start * (f_stop / f_start).powf(i as f64 / (n - 1) as f64);
        if let Ok(h) = solver.transfer(f, "adc") {
            out.push(AcPoint { f, mag_db: db(h), phase_deg: h.arg().to_degrees() });
        }
    }
    let at = |f: f64| solver.transfer(f, "adc").map(db).unwrap_or(f64::NAN);
    let f_mid = s.mid_band();
    let in_band: Vec<f64> = out
        .iter()
        .filter(|p| p.f >= s.band_low && p.f <= s.band_high)
        .map(|p| p.mag_db)
        .chain([at(s.band_high)])
        .chain(if s.band_low > 0.0 { Some(at(s.band_low)) } else { None })
        .collect();
    let ripple_db = in_band.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
        - in_band.iter().cloned().fold(f64::INFINITY, f64::min);
    AcAnalysis {
        points: out,
        f_low_3db,
        f_high_3db,
        ripple_db: if ripple_db.is_finite() { ripple_db } else { 0.0 },
        gain_band_low_db: if s.coupling == Coupling::Ac { Some(at(s.band_low)) } else { None },
        gain_mid_db: at(f_mid),
        gain_band_high_db: at(s.band_high),
        f_mid,
    }
}
