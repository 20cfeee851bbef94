//! Analyses of the rounded circuit: DC transfer, frequency response, noise against the LSB,
//! tolerance spread (worst case and Monte Carlo) and loading.
//!
//! Every analysis reads the one [`Circuit`] that synthesis produced (through the solver) and
//! returns plain data ready for JSON and for plotting; [`analyse`] runs them all and adds the
//! checks that follow from them.

// Each analysis module registers itself here.
// (modules)
pub mod perturb;
pub mod tolerance;
pub mod noise;
pub mod loading;
pub mod response;

use crate::request::Request;

/// Options of the analyses; `Default` gives the documented defaults.
#[derive(Debug, Clone, PartialEq)]
pub struct AnalysisConfig {
    /// Points of the frequency response (log-spaced).
    pub ac_points: usize,
    /// Points of the DC transfer sweep.
    pub dc_points: usize,
    /// Frequencies at which noise density is computed (log-spaced).
    pub noise_points: usize,
    /// Monte Carlo builds.
    pub monte_carlo_runs: usize,
    /// Monte Carlo seed.
    pub seed: u64,
    /// Temperature for thermal noise, K.
    pub temperature: f64,
    /// Bins of each Monte Carlo histogram.
    pub histogram_bins: usize,
}

impl Default for AnalysisConfig {
    fn default() -> Self {
        AnalysisConfig { ac_points: 400, dc_points: 121, noise_points: 160, monte_carlo_runs: 10_000, seed: 1, temperature: 300.0, histogram_bins: 40 }
    }
}

impl AnalysisConfig {
    /// The defaults with the request's `analysis` options applied.
    pub fn from_request(req: &Request) -> AnalysisConfig {
        AnalysisConfig {
            monte_carlo_runs: req.analysis.monte_carlo_runs,
            seed: req.analysis.seed,
            temperature: req.analysis.temperature,
            ..AnalysisConfig::default()
        }
    }
}
