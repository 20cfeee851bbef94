//! What follows the gain stage: the anti-alias filter ([`super::filter`]) and the converter
//! drive ([`super::drive`]), planned from the request and attached to the gain stage's
//! circuit.
//!
//! Both are designed before the gain stage because they change what it must deliver: the
//! drive resistor and the converter's input impedance divide the DC level by
//! k = R_in/(R_in + R), so the gain stage aims at the target divided by k; an inverting
//! (multiple-feedback) cascade mirrors the level around its reference V_ref, so the gain
//! stage then aims at 2·V_ref − target/k (V_ref is the middle of the scaled target, rounded
//! by its divider). Unity-gain sections pass DC unchanged (their amplifiers' finite gain is
//! in the solver, and the design loop in [`crate::design`] absorbs the rest).
//!
//! Node names (stable, for the schematic and for scripts): the gain stage's output becomes
//! `out1`; section k (from 1, in signal order) has its junction `f{k}a`, + input `f{k}p`,
//! − input `f{k}n` (multiple feedback) and output `f{k}o`; inverting sections share
//! `fref`; the drive resistor ends at `adc`, where the charge bucket and the clamp sit.
//! Whatever comes last drives `adc` directly: without a drive the last section's output is
//! `adc`, and without filter or drive the gain stage's output stays `adc`.
//!
//! The attachment (parts, nodes, equations) is in `attach`; the checks and figures of the
//! filter and the drive are in `checks`.

mod attach;
mod checks;

use std::f64::consts::PI;

use super::drive::{self, DriveDesign};
use super::filter::{self, FilterDesign, NoFilter};
use super::Target;
use crate::amplifier::{Amplifier, Rails};
use crate::request::{Coupling, Request};
use crate::values::{self, Window};
pub use checks::{drive_checks, figures, filter_checks};

/// Thevenin resistance aimed at for the filter reference divider, Ω.
pub const REFERENCE_THEVENIN: f64 = 20e3;
/// Corner of the reference divider with its bypass capacitor, at most, Hz (common practice).
pub const REFERENCE_CORNER: f64 = 10.0;

/// The filter and the drive planned for one request.
#[derive(Debug, Clone)]
pub struct Chain {
    pub filter: Result<FilterDesign, NoFilter>,
    pub drive: Option<DriveDesign>,
}

/// The reference of inverting sections: its voltage and, unless it is ground, the divider
/// `(rail node, top, bottom, bypass)` that makes it.
#[derive(Debug, Clone, PartialEq)]
pub struct Reference {
    pub vref: f64,
    pub divider: Option<(&'static str, f64, f64, f64)>,
}

/// Plans the filter and the drive.
pub fn plan(req: &Request, amp: &Amplifier, rails: Rails) -> Chain {
    Chain { filter: filter::design(req), drive: drive::design(req, amp, rails) }
}

impl Chain {
    /// Anything follows the gain stage.
    pub fn follows(&self) -> bool {
        self.filter.is_ok() || self.drive.is_some()
    }

    /// DC ratio from the gain stage's output to the converter pin.
    pub fn dc_factor(&self, req: &Request) -> f64 {
        self.drive.as_ref().map_or(1.0, |d| d.dc_factor(req.destination.impedance))
    }

    /// The reference inverting sections need for final target `t`, if any.
    pub fn reference(&self, req: &Request, rails: Rails, t: Target) -> Option<Reference> {
        self.filter.as_ref().ok().filter(|f| f.uses_reference())?;
        let want = 0.5 * (t.at_min + t.at_max) / self.dc_factor(req);
        let span = (t.at_max - t.at_min).abs().max(1e-9);
        if rails.is_dual() && want.abs() < 1e-6 * span {
            return Some(Reference { vref: 0.0, divider: None });
        }
        let (rail, node) = if want > 0.0 {
            crate::synth::level_source(req, rails, want)
        } else if rails.is_dual() {
            (rails.neg, "vneg")
        } else {
            return None;
        };
        let window = Window { min: req.parts.resistor_min, max: req.parts.resistor_max };
        let d = values::best_divider(req.parts.resistor_series, want / rail, Some(REFERENCE_THEVENIN), window)?;
        let mut corner = REFERENCE_CORNER;
        if req.source.coupling == Coupling::Ac && req.source.band_low > 0.0 {
            corner = corner.min(0.1 * req.source.band_low);
        }
        let c = values::step_up(req.parts.capacitor_series, 1.0 / (2.0 * PI * corner * d.thevenin))?;
        Some(Reference { vref: rail * d.ratio, divider: Some((node, d.top, d.bottom, c)) })
    }

    /// What the gain stage must deliver so that the pin sees `t`.
    pub fn gain_target(&self, req: &Request, t: Target, reference: Option<&Reference>) -> Target {
        let k = self.dc_factor(req);
        let inverts = self.filter.as_ref().is_ok_and(|f| f.inverts());
        match reference.filter(|_| inverts) {
            None => Target { at_min: t.at_min / k, at_max: t.at_max / k, gain: t.gain / k, offset: t.offset / k },
            Some(r) => {
                let (a, b) = (2.0 * r.vref - t.at_max / k, 2.0 * r.vref - t.at_min / k);
                match req.source.coupling {
                    Coupling::Dc => {
                        let s = &req.source;
                        let m = (b - a) / (s.max - s.min);
                        Target { at_min: a, at_max: b, gain: m, offset: a - m * s.min }
                    }
                    Coupling::Ac => {
                        Target { at_min: a, at_max: b, gain: t.gain / k, offset: 2.0 * r.vref - t.offset / k }
                    }
                }
            }
        }
    }
}
