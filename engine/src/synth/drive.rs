//! The converter drive: an RC at the converter pin for its sampling capacitor, and the
//! protection of that pin when the amplifier can drive it beyond the converter's range.
//!
//! **Charge bucket**: when the converter connects its sampling
//! capacitor C_in, the charge it needs comes from a capacitor at the pin, C_b, at least
//! [`BUCKET_RATIO`] × C_in, so the step the pin sees is at most C_in/(C_in + C_b) ≈ 5 %
//! of the difference to the previous sample (common practice); C_b is the smallest value of
//! the capacitor series at or above that. An oversampling converter's switched-capacitor
//! input samples at its modulator rate: it gets the same bucket, settled within half a
//! modulator period (common practice: the input is connected for one clock phase).
//!
//! **Settling rule.** The pin must settle to ½ LSB within the acquisition time: an
//! exponential settles to 2^−(N+1) of a full-scale step after ln(2^(N+1)) time constants
//! (12 bits: 9.01 τ; 16 bits: 11.78 τ). The series resistor R and C_b, plus the follower's
//! own closed-loop time constant 1/(2π·GBW), must therefore satisfy
//! ln(2^(N+1))·(R·C_b + 1/(2π·GBW)) ≤ t_acq.
//!
//! **Stability** (isolation resistor): an amplifier driving C_b directly sees a pole at
//! 1/(2π·R_o·C_b) from its open-loop output resistance R_o; R in series adds a zero at
//! 1/(2π·R·C_b). The phase the load costs at the amplifier's unity-gain frequency f_u (its
//! GBW), atan(2π·f_u·(R_o + R)·C_b) − atan(2π·f_u·R·C_b), is kept within
//! [`PHASE_LOSS_LIMIT`] (common practice: a follower keeps ≥ 45° of margin); R_o is taken
//! as [`OUTPUT_RESISTANCE`], typical of small amplifiers.
//!
//! **Protection.** When the amplifier's output can reach more than [`CLAMP_DROP`] beyond
//! the converter's range, a fault (or an overload at the sensor) pushes current into the
//! converter's input protection; R limits it to `destination.injection_limit` (the
//! converter's datasheet governs; default 5 mA): R ≥ (excess beyond the range − 0.3 V)/I_limit.
//! Where the converter's lower limit is ground and the amplifier can go below it, a Schottky
//! clamp from ground to the pin takes that current instead of the converter; sized with R,
//! R then only keeps the clamp within [`CLAMP_CURRENT`]. The overdrive is a state the
//! circuit reaches by itself (the amplifier at its swing limit), so the part list rates R
//! for the power it then takes, (excess − 0.3 V)²/R, and the clamp for its current.
//!
//! **Remedies** ([`Remedies`]) when the pin cannot settle, each computed, none already so: a
//! smaller R with clamps at both ends of the range (the smallest R stability and the clamps'
//! current allow); a bucket so large that the kick alone stays under ½ LSB,
//! C_b ≥ 2^(N+1)·C_in, where R can refill it between samples (R·C_in·f_s·2^(N+1) ≤ 1) and
//! R·C_b's corner lies above ten times the band; the acquisition time (and, at the same
//! share of the period, the sample rate) that settles; a driver on the converter's range as
//! its rails, which cannot overdrive the pin (R then only for stability).
//!
//! R is the smallest resistor-series value meeting the stability and protection minima (it
//! may lie below the resistor window: a drive resistor of tens of ohms is common); a
//! settling check says whether it also meets the settling maximum.

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::figures::Block;
use crate::request::Request;
use crate::units::{format, Quantity};
use crate::values;

/// Charge-bucket capacitor at least this many times the sampling capacitance.
pub const BUCKET_RATIO: f64 = 20.0;
/// Open-loop output resistance assumed for the amplifier, Ω (common practice).
pub const OUTPUT_RESISTANCE: f64 = 100.0;
/// Phase the capacitive load may cost at the unity-gain frequency, degrees.
pub const PHASE_LOSS_LIMIT: f64 = 20.0;
/// Forward voltage of a clamp (Schottky) and headroom before protection matters, V.
pub const CLAMP_DROP: f64 = 0.3;
/// Smallest drive resistor, Ω.
pub const R_MIN: f64 = 10.0;
/// Current a clamp at the pin may take, A (from memory: a small-signal Schottky stays near
/// 0.4 V up to about here, below the converter's own protection diodes).
pub const CLAMP_CURRENT: f64 = 10e-3;

/// The designed drive (`drive` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriveDesign {
    /// Series resistor from the last amplifier to the converter pin, Ω.
    pub resistor: f64,
    /// Charge-bucket capacitor at the pin, F.
    pub capacitor: Option<f64>,
    /// A Schottky clamp from ground to the pin.
    pub clamp_to_ground: bool,
    /// ln(2^(N+1)): time constants to settle to ½ LSB.
    pub settling_time_constants: f64,
    /// Settling time of the pin with the chosen parts, s.
    pub settling_time: Option<f64>,
    /// The amplifier's own closed-loop time constant 1/(2π·GBW), s.
    #[serde(skip)]
    pub amplifier_time_constant: f64,
    /// Time the pin has to settle: the acquisition time, or half a modulator period, s.
    pub acquisition_time: f64,
    /// Minimum R for stability (0 without a bucket), for protection, and maximum R for settling, Ω.
    pub r_stability_min: f64,
    pub r_protection_min: f64,
    pub r_settling_max: Option<f64>,
    /// Phase the load costs at the unity-gain frequency with the chosen R, degrees.
    pub phase_loss_deg: Option<f64>,
    /// Largest current the overdrive pushes into the converter's pin, and into the clamp, A.
    pub fault_current: f64,
    pub clamp_current: f64,
    /// Largest power in R at the overdrive, W.
    pub fault_power: f64,
    pub injection_limit: f64,
    /// How far beyond the converter's range (above, below) the amplifier can drive the pin, V.
    pub overdrive: [f64; 2],
}

/// Time constants an exponential needs to settle to ½ LSB of an N-bit converter: ln(2^(N+1)).
pub fn settling_time_constants(bits: u32) -> f64 {
    (bits as f64 + 1.0) * std::f64::consts::LN_2
}

/// Phase (degrees) that `c` behind `r` costs a follower with unity-gain frequency `f_u`.
pub fn phase_loss_deg(r: f64, c: f64, f_u: f64) -> f64 {
    let w = 2.0 * std::f64::consts::PI * f_u * c;
    ((w * (OUTPUT_RESISTANCE + r)).atan() - (w * r).atan()).to_degrees()
}

/// The drive the request needs: every converter's input samples, so it always has a bucket
/// (`None` only when no series value brackets the bucket and nothing needs protection).
pub fn design(req: &Request, amp: &Amplifier, rails: Rails) -> Option<DriveDesign> {
    let d = &req.destination;
    let (out_lo, out_hi) = amp.output_limits(rails);
    let over_hi = (out_hi - d.max).max(0.0);
    let over_lo = (d.min - out_lo).max(0.0);
    let excess = |o: f64| (o - CLAMP_DROP).max(0.0);
    let clamp_to_ground = over_lo > CLAMP_DROP && d.min.abs() <= 0.01;
    let lo_limit = if clamp_to_ground { CLAMP_CURRENT.max(d.injection_limit) } else { d.injection_limit };
    let r_protection_min = (excess(over_hi) / d.injection_limit).max(excess(over_lo) / lo_limit);
    let t_acq = if d.converter.samples() { d.acquisition_time } else { 0.5 / d.input_rate() };
    let rser = req.parts.resistor_series;
    let n_tau = settling_time_constants(d.bits);
    let tau_amp = 1.0 / (2.0 * std::f64::consts::PI * amp.gbw.max(1.0));
    let capacitor = values::step_up(req.parts.capacitor_series, BUCKET_RATIO * d.input_capacitance);
    if capacitor.is_none() && r_protection_min <= 0.0 {
        return None;
    }
    let r_stability_min = match capacitor {
        Some(c) => stability_min(c, amp.gbw),
        None => 0.0,
    };
    let r_settling_max = capacitor.map(|c| ((t_acq / n_tau - tau_amp) / c).max(0.0));
    let want = r_stability_min.max(r_protection_min).max(R_MIN);
    let resistor = values::step_up(rser, want).unwrap_or(want);
    let settling_time = capacitor.map(|c| n_tau * (resistor * c + tau_amp));
    let phase = capacitor.map(|c| phase_loss_deg(resistor, c, amp.gbw));
    let (i_hi, i_lo) = (excess(over_hi) / resistor, excess(over_lo) / resistor);
    Some(DriveDesign {
        resistor,
        capacitor,
        clamp_to_ground,
        settling_time_constants: n_tau,
        settling_time,
        amplifier_time_constant: tau_amp,
        acquisition_time: t_acq,
        r_stability_min,
        r_protection_min,
        r_settling_max,
        phase_loss_deg: phase,
        fault_current: if clamp_to_ground { i_hi } else { i_hi.max(i_lo) },
        clamp_current: if clamp_to_ground { i_lo } else { 0.0 },
        fault_power: i_hi.max(i_lo).powi(2) * resistor,
        injection_limit: d.injection_limit,
        overdrive: [over_hi, over_lo],
    })
}

/// What would let the pin settle (see the module documentation); each `None` when it would
/// not, or is already so.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Remedies {
    /// With clamps at both ends of the range: R, Ω, the clamp's current, A, the settling time, s.
    pub clamped: Option<(f64, f64, f64)>,
    /// A bucket whose kick stays under ½ LSB, F, and R·C_b's corner, Hz.
    pub bucket: Option<(f64, f64)>,
    /// The acquisition time that settles, s, and the sample (or modulator) rate at the
    /// same share of the period, Hz.
    pub acquisition: (f64, f64),
    /// A driver on the converter's range as its rails: R, Ω, and the settling time, s.
    pub driver: Option<(f64, f64)>,
}

/// The remedies for a pin that does not settle (`None` when it settles or has no bucket).
pub fn remedies(req: &Request, d: &DriveDesign) -> Option<Remedies> {
    let (c, ts) = (d.capacitor?, d.settling_time?);
    if ts <= d.acquisition_time {
        return None;
    }
    let dst = &req.destination;
    let settle = |r: f64| d.settling_time_constants * (r * c + d.amplifier_time_constant);
    let step = |r: f64| values::step_up(req.parts.resistor_series, r).unwrap_or(r);
    let works = |r: f64| (r < d.resistor && settle(r) <= d.acquisition_time).then_some(r);
    let r_free = step(d.r_stability_min.max(R_MIN));
    let excess = (d.overdrive[0].max(d.overdrive[1]) - CLAMP_DROP).max(0.0);
    let clamped = works(step(excess / CLAMP_CURRENT.max(d.injection_limit)).max(r_free))
        .filter(|_| excess > 0.0)
        .map(|r| (r, excess / r, settle(r)));
    let driver = works(r_free).filter(|_| excess > 0.0).map(|r| (r, settle(r)));
    let kick = 2f64.powi(dst.bits as i32 + 1);
    let big = values::step_up(req.parts.capacitor_series, kick * dst.input_capacitance);
    let bucket = big
        .map(|cb| (cb, 1.0 / (2.0 * std::f64::consts::PI * d.resistor * cb)))
        .filter(|&(_, fc)| fc >= 10.0 * req.source.band_high)
        .filter(|_| d.resistor * dst.input_capacitance * dst.input_rate() * kick <= 1.0);
    let rate = dst.input_rate() * d.acquisition_time / ts;
    Some(Remedies { clamped, bucket, acquisition: (ts, rate), driver })
}

/// Smallest series resistor that keeps the phase the load `c` costs within the limit.
fn stability_min(c: f64, f_u: f64) -> f64 {
    if phase_loss_deg(0.0, c, f_u) <= PHASE_LOSS_LIMIT {
        return 0.0;
    }
    let (mut lo, mut hi) = (0.0, 1e6);
    if phase_loss_deg(hi, c, f_u) > PHASE_LOSS_LIMIT {
        return hi;
    }
    for _ in 0..100 {
        let m = 0.5 * (lo + hi);
        if phase_loss_deg(m, c, f_u) > PHASE_LOSS_LIMIT {
            lo = m;
        } else {
            hi = m;
        }
    }
    hi
}

impl DriveDesign {
    /// DC ratio of the pin to the drive resistor's input with the converter's input
    /// impedance `r_in` as load.
    pub fn dc_factor(&self, r_in: f64) -> f64 {
        if r_in > 0.0 && r_in.is_finite() {
            r_in / (r_in + self.resistor)
        } else {
            1.0
        }
    }
}

impl DriveDesign {
    /// The converter pin's figures.
    pub fn figures(&self) -> Block {
        let mut b = Block::new("drive", "At the converter pin").quantity(
            "Series resistor from the last amplifier",
            self.resistor,
            Quantity::Resistance,
        );
        if let Some(c) = self.capacitor {
            b = b.quantity("Charge reservoir from the pin to ground", c, Quantity::Capacitance);
        }
        if let Some(t) = self.settling_time {
            let text = format!(
                "{} of the {} acquisition time ({} time constants)",
                format(t, Quantity::Time),
                format(self.acquisition_time, Quantity::Time),
                crate::figures::format_sig_fixed(self.settling_time_constants, 2)
            );
            b = b.text("Settling to ½ LSB", text);
        }
        if self.clamp_to_ground {
            let i = format(self.clamp_current, Quantity::Current);
            b = b.text("Clamp", format!("a Schottky diode from ground to the pin takes up to {i} below ground"));
        }
        let fault = format!(
            "{} (limit used {}; the converter's datasheet governs)",
            format(self.fault_current, Quantity::Current),
            format(self.injection_limit, Quantity::Current)
        );
        b.text("Fault current into the pin at most", fault)
    }
}
