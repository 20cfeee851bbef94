//! Analyses of the rounded circuit: DC transfer, frequency response, noise against the LSB,
//! tolerance spread (worst case and Monte Carlo), loading and alias rejection.
//!
//! Every analysis reads the one [`Circuit`] that synthesis produced (through the solver) and
//! returns plain data ready for JSON and for plotting; [`analyse`] runs them all and adds the
//! checks that follow from them.

// Each analysis module registers itself here.
// (modules)
pub mod alias;
pub mod checks;
pub mod cmrr;
pub mod loading;
pub mod noise;
pub mod perturb;
pub mod response;
pub mod tolerance;

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
        AnalysisConfig {
            ac_points: 400,
            dc_points: 121,
            noise_points: 160,
            monte_carlo_runs: 10_000,
            seed: 1,
            temperature: 300.0,
            histogram_bins: 40,
        }
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

/// Every analysis of one design.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Analysis {
    pub dc: response::DcAnalysis,
    pub ac: response::AcAnalysis,
    pub noise: noise::NoiseAnalysis,
    pub tolerance: tolerance::ToleranceAnalysis,
    pub loading: loading::LoadingAnalysis,
    /// Required and achieved rejection at the first frequency that folds into the band.
    pub alias: Option<alias::AliasAnalysis>,
    /// Pairs and bridges: the common-mode rejection over seeded builds.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cmrr: Option<cmrr::CmrrAnalysis>,
}

/// What the analyses need to know of the prediction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Nominal {
    /// Mid-band (AC) or DC gain, signed.
    pub gain: f64,
    pub f_low_3db: Option<f64>,
    pub f_high_3db: Option<f64>,
}

/// Runs every analysis on `circuit` and returns them with the checks that follow.
pub fn analyse(
    req: &Request, circuit: &crate::circuit::Circuit, nominal: Nominal, cfg: &AnalysisConfig,
) -> (Analysis, Vec<crate::diag::Check>) {
    let dc = response::dc_transfer(req, circuit, nominal.gain, cfg.dc_points);
    let ac = response::ac_response(req, circuit, nominal.f_low_3db, nominal.f_high_3db, cfg.ac_points);
    let noise_cfg =
        noise::NoiseConfig { temperature: cfg.temperature, points: cfg.noise_points, include_amplifier: true };
    let noise = noise::noise(req, circuit, nominal.gain, &noise_cfg);
    let tol_cfg = tolerance::ToleranceConfig { runs: cfg.monte_carlo_runs, seed: cfg.seed, bins: cfg.histogram_bins };
    let tolerance = tolerance::tolerance(req, circuit, &tol_cfg);
    let loading = loading::loading(req, circuit);
    let alias = alias::alias(req, circuit);
    let cmrr = cmrr::cmrr(circuit, cfg.seed);
    let a = Analysis { dc, ac, noise, tolerance, loading, alias, cmrr };
    let checks = checks::checks(req, &a, nominal);
    (a, checks)
}
