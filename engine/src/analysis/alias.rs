//! Alias rejection of the rounded circuit: at the first frequency that folds into the band
//! (f_s − band_high, or the modulator rate minus band_high for an oversampling converter),
//! the rejection the rule in [`crate::synth::filter`] requires and the rejection the whole
//! circuit achieves — gain stage, filter and drive with the amplifiers' finite gain and
//! bandwidth — both relative to the mid-band gain (the DC gain for DC coupling, the gain at
//! √(band_low·band_high) for AC coupling), from the same solver as every other analysis.

use serde::Serialize;

use crate::circuit::Circuit;
use crate::request::Request;
use crate::solve::Solver;
use crate::synth::filter;

/// `analysis.alias`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AliasAnalysis {
    /// The first frequency that folds into the band, Hz.
    pub frequency: f64,
    /// Rejection the rule requires there, dB.
    pub required_db: f64,
    /// Rejection the rounded circuit achieves there, dB.
    pub achieved_db: f64,
}

/// The alias figures of `circuit` for `req`; `None` when no frequency folds into the band
/// from above it or the circuit does not solve.
pub fn alias(req: &Request, circuit: &Circuit) -> Option<AliasAnalysis> {
    let frequency = filter::alias_frequency(req)?;
    let s = &req.source;
    let f_mid = s.mid_band();
    let solver = Solver::new(circuit);
    let mid = solver.transfer(f_mid, "adc").ok()?.norm();
    let at = solver.transfer(frequency, "adc").ok()?.norm();
    let achieved_db = 20.0 * (mid / at.max(1e-300)).log10();
    achieved_db.is_finite().then_some(AliasAnalysis {
        frequency,
        required_db: filter::required_rejection_db(req.destination.bits, req.filter.out_of_band_level),
        achieved_db,
    })
}
