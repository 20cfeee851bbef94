//! The mapping a rounded circuit realises, from the MNA solver: gain, offset, the output at
//! both ends of the sensor's range and the −3 dB points of the response from the sensor to
//! the converter input. The solver uses the same finite-gain, finite-bandwidth amplifier
//! model the netlist exports, so a prediction agrees with a SPICE3 run of that netlist.

use serde::Serialize;

use crate::circuit::Circuit;
use crate::request::{Coupling, Request};
use crate::solve::Solver;

/// The mapping the rounded circuit actually realises.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Predicted {
    /// V/V: DC coupling, the slope between the source extremes; AC coupling, the mid-band gain (signed).
    pub gain: f64,
    /// DC coupling: the intercept b; AC coupling: the output's DC level.
    pub offset: f64,
    pub output_at_min: f64,
    pub output_at_max: f64,
    /// −3 dB points of the response from the sensor EMF to the converter input, where they exist.
    pub band_low: Option<f64>,
    pub band_high: Option<f64>,
}

/// The mapping of a rounded circuit, from the solver.
pub fn predict(req: &Request, c: &Circuit) -> Option<Predicted> {
    let solver = Solver::new(c);
    let s = &req.source;
    match s.coupling {
        Coupling::Dc => {
            let y1 = solver.dc(s.min).ok()?.voltage("adc")?;
            let y2 = solver.dc(s.max).ok()?.voltage("adc")?;
            let gain = (y2 - y1) / (s.max - s.min);
            let h0 = solver.transfer(0.0, "adc").ok()?.norm();
            // The upper corner is searched from three decades below the band edge, so a
            // response that already falls inside the band (too little gain-bandwidth, a
            // corner placed too low) is found where it is, not at the band edge.
            let (_, band_high) = corners(&solver, h0, None, 1e-3 * s.band_high.max(1.0));
            Some(Predicted {
                gain,
                offset: y1 - gain * s.min,
                output_at_min: y1,
                output_at_max: y2,
                band_low: None,
                band_high,
            })
        }
        Coupling::Ac => {
            let mid = 0.5 * (s.min + s.max);
            let level = solver.dc(mid).ok()?.voltage("adc")?;
            let f_mid = s.band_centre();
            let h = solver.transfer(f_mid, "adc").ok()?;
            let gain = if h.re >= 0.0 { h.norm() } else { -h.norm() };
            let (band_low, band_high) = corners(&solver, h.norm(), Some(f_mid), f_mid);
            Some(Predicted {
                gain,
                offset: level,
                output_at_min: level + gain * (s.min - mid),
                output_at_max: level + gain * (s.max - mid),
                band_low,
                band_high,
            })
        }
    }
}

/// −3 dB points relative to `reference` magnitude: the first crossing below `low_from` (if
/// given) and the first above `high_from`, on a log grid of 10 points per decade (13 decades
/// up, 8 down), then refined by bisection.
fn corners(solver: &Solver, reference: f64, low_from: Option<f64>, high_from: f64) -> (Option<f64>, Option<f64>) {
    let level = reference / std::f64::consts::SQRT_2;
    let mag = |f: f64| solver.transfer(f, "adc").map(|h| h.norm()).unwrap_or(0.0);
    let search = |start: f64, step: f64, decades: f64| -> Option<f64> {
        let n = (decades * 10.0) as usize;
        let mut f_prev = start;
        for i in 1..=n {
            let f = start * 10f64.powf(step * i as f64 / 10.0);
            if mag(f) < level {
                let (mut a, mut b) = (f_prev.ln(), f.ln());
                // 30 halvings of a tenth of a decade: relative precision below 1e-9.
                for _ in 0..30 {
                    let c = 0.5 * (a + b);
                    if mag(c.exp()) < level {
                        b = c;
                    } else {
                        a = c;
                    }
                }
                return Some((0.5 * (a + b)).exp());
            }
            f_prev = f;
        }
        None
    };
    let low = low_from.and_then(|f| search(f, -1.0, 8.0));
    (low, search(high_from, 1.0, 13.0))
}
