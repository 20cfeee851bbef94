//! The anti-alias low-pass: how much rejection the converter needs, and the lowest-order
//! filter of the requested response that gives it with standard parts.
//!
//! **The rule.** Content at the first frequency that folds into the band — f_s − band_high
//! for a sampling converter, the modulator rate minus band_high for an oversampling one —
//! must be attenuated to the converter's noise floor: the full dynamic range of an ideal
//! N-bit converter, 20·log10(2^N·√1.5) = 6.02·N + 1.76 dB, reduced by how far below full
//! scale the content there is (`filter.out_of_band_level`): 12 bits, full-scale content
//! → 74.0 dB. Both figures are relative to the mid-band gain.
//!
//! **Order and corner.** For each order from 1 up to `max_order` (or the requested order
//! alone) the prototype ([`prototype`]) gives two normalised frequencies: the pass edge,
//! up to which the in-band error stays within `passband_error`, and the stop edge, where
//! the loss reaches the required rejection. The corner (the prototype's normalisation
//! frequency: −3 dB for flat and linear phase, the ripple edge for steep) must lie between
//! band_high / pass edge and f_alias / stop edge. The first order whose interval is at
//! least [`CORNER_MARGIN`] wide is designed with its corner at the geometric middle of the
//! interval, which leaves equal room both ways for rounding and part tolerances; its
//! sections are realised with standard values ([`sections`]) and the rounded cascade is
//! evaluated again. If rounding costs the passband or the rejection, the corner is moved
//! toward the other end of the interval ([`CORNER_POSITIONS`]), then the next order is tried.
//! When no order up to `max_order` works, the filter of `max_order` with its corner at the
//! lowest frequency that keeps the passband is designed anyway, and [`Shortfall`] says what
//! would work: the sample rate that makes the rule feasible at that order, an oversampling
//! converter, or the out-of-band level at which that filter suffices.
//!
//! **Cascade.** The first-order section (odd orders, an RC into a follower) comes first,
//! then the second-order sections in ascending Q, highest Q last. Sections are unity-gain
//! Sallen-Key, or multiple feedback when `filter.topology` asks for it; multiple-feedback
//! sections invert, so when an odd number of them would flip the output and the polarity must
//! be kept (`keep_polarity`), the lowest-Q section is built as Sallen-Key instead.
//!
//! **Amplifier demand** (common practice): a second-order section needs an amplifier whose
//! gain-bandwidth is at least 100 × noise gain × Q × f_n (unity-gain Sallen-Key: noise
//! gain 1; unity-gain multiple feedback: 2), so that its open-loop gain stays 40 dB above
//! the section's peaking; the follower of a first-order section needs 10 × f_c, the margin
//! the gain stage uses.

pub mod prototype;
pub mod sections;

use serde::Serialize;

use crate::figures::Block;
use crate::request::{FilterTopology, Request, ResponseKind};
use crate::units::{format, Quantity};
use prototype::{cascade_loss_db, prototype, Pair, Prototype};
use sections::{realise, PartsConfig, Realised, SectionKind};

/// The corner interval of the chosen order must span at least this ratio (±5 % about
/// its middle, room for rounding the parts), unless no order up to the limit has it.
pub const CORNER_MARGIN: f64 = 1.1;
/// Where in the corner interval (0 = its low end, 1 = its high end, on a log scale) the
/// corner is tried, in turn, until the rounded cascade meets both ends of the rule.
pub const CORNER_POSITIONS: [f64; 5] = [0.5, 0.65, 0.35, 0.8, 0.2];
/// GBW per section: this many times noise gain × Q × f_n (common practice).
pub const SECTION_GBW_FACTOR: f64 = 100.0;
/// GBW for a first-order section's follower: this many times its corner.
pub const FOLLOWER_GBW_FACTOR: f64 = 10.0;
/// Oversampling ratio assumed when an oversampling converter is proposed as a way out.
pub const PROPOSED_OVERSAMPLING: f64 = 64.0;

/// The designed filter (`filter` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FilterDesign {
    pub response: ResponseKind,
    pub order: u32,
    /// The topology requested; `sections[k].kind` says how each section is built.
    pub topology: FilterTopology,
    /// The prototype's normalisation frequency, Hz (−3 dB for flat and linear phase, the
    /// ripple edge for steep).
    pub corner: f64,
    /// The interval the corner had to lie in, Hz (low end from the passband, high end from the rejection).
    pub corner_range: [f64; 2],
    pub sections: Vec<SectionReport>,
    /// The first frequency that folds into the band, Hz.
    pub alias_frequency: f64,
    /// Rejection the rule requires there, dB.
    pub required_db: f64,
    /// Rejection of the rounded sections there (ideal amplifiers), dB.
    pub rounded_db: f64,
    /// Largest in-band error of the rounded sections up to band_high, dB.
    pub passband_error_db: f64,
    /// The passband error the request allows, dB (the ripple, for steep, when it is larger).
    pub passband_allowed_db: f64,
    /// Gain-bandwidth the sections need, Hz.
    pub gbw_min: f64,
    /// Present when no order up to the limit meets the rule.
    pub shortfall: Option<Shortfall>,
    /// The response's own ripple exceeds the requested passband error.
    pub ripple_exceeds_request: bool,
    #[serde(skip)]
    pub realised: Vec<Realised>,
}

/// One section as designed and as rounded.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SectionReport {
    pub kind: SectionKind,
    /// Pole frequency and Q wanted (first order: its corner, Q 0).
    pub f_n: f64,
    pub q: f64,
    /// The same from the rounded parts.
    pub f_n_rounded: f64,
    pub q_rounded: f64,
    /// Relative deviations after rounding.
    pub f_n_error: f64,
    pub q_error: f64,
    /// Built into the gain stage (a first-order pole) instead of a section of its own.
    pub in_gain_stage: bool,
}

/// What would make the rule feasible when no order up to the limit meets it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Shortfall {
    /// The highest order allowed, which was designed anyway.
    pub order: u32,
    /// Rejection reached at the alias frequency, dB (ideal prototype).
    pub reached_db: f64,
    /// Sample rate (sampling converter) or modulator rate (oversampling) at which a filter
    /// of this order meets the rule, Hz.
    pub rate_needed: f64,
    /// Sampling converters: the order an oversampling converter with a modulator at
    /// 64 × the sample rate would need (`None` when even that exceeds the limit).
    pub order_with_oversampling: Option<u32>,
    /// Out-of-band level (dB relative to full scale) at which this filter suffices.
    pub level_db_needed: f64,
    /// The lowest order up to `max_order` that meets the rule, when the order was fixed by
    /// the request and a higher one would do.
    pub order_needed: Option<u32>,
}

/// Full dynamic range of an ideal N-bit converter, 20·log10(2^N·√1.5) dB (6.02·N + 1.76).
pub use crate::request::full_range_db;

/// Rejection required at the alias frequency: the full dynamic range reduced by how far
/// below full scale (`level`, a fraction) the out-of-band content is.
pub fn required_rejection_db(bits: u32, level: f64) -> f64 {
    full_range_db(bits) + 20.0 * level.log10()
}

/// The first frequency that folds into the band: f_s − band_high for a sampling converter,
/// the modulator rate minus band_high for an oversampling one. `None` when it does not lie
/// above the band.
pub fn alias_frequency(req: &Request) -> Option<f64> {
    req.destination.folding_frequency(req.source.band_high)
}

/// Why no filter was designed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoFilter {
    /// `filter.response` is `none`.
    NotWanted,
    /// The band does not lie below the alias frequency (a feasibility error says so).
    NoRoom,
    /// The out-of-band level is so low that no rejection is needed.
    NotNeeded,
    /// No standard parts realise a section (corner far outside the parts' reach).
    Unrealisable,
}

/// Designs the filter the request asks for.
pub fn design(req: &Request) -> Result<FilterDesign, NoFilter> {
    let spec = &req.filter;
    if spec.response == ResponseKind::None {
        return Err(NoFilter::NotWanted);
    }
    let fa = alias_frequency(req).ok_or(NoFilter::NoRoom)?;
    let required = required_rejection_db(req.destination.bits, spec.out_of_band_level);
    if required <= 0.0 {
        return Err(NoFilter::NotNeeded);
    }
    let bh = req.source.band_high;
    let orders: Vec<u32> = match spec.order {
        Some(n) => vec![n],
        None => (1..=spec.max_order.max(1)).collect(),
    };
    let last = *orders.last().unwrap_or(&1);
    let cfg = PartsConfig::of(&req.parts);
    let mut fallback = None;
    for n in orders {
        let Some(proto) = prototype(spec.response, n) else { continue };
        let (xp, ripple_over) = proto.pass_edge((spec.passband_error - spec.chain_droop_db).max(0.01));
        let lo = bh / xp;
        let hi = proto.stop_edge(required).map_or(0.0, |xs| fa / xs);
        if hi < lo * CORNER_MARGIN && n != last {
            continue;
        }
        // The middle of the interval first; if rounding costs the passband or the
        // rejection there, positions toward the other end.
        let positions: &[f64] = if hi > lo { &CORNER_POSITIONS } else { &[0.0] };
        let mut first = None;
        for &t in positions {
            let corner = if hi > lo { lo * (hi / lo).powf(t) } else { lo };
            let Some(d) = build(req, &proto, corner, [lo, hi], fa, required, ripple_over, cfg) else { continue };
            if d.rounded_db >= required && d.passband_error_db <= d.passband_allowed_db - spec.chain_droop_db + 1e-9 {
                return Ok(d);
            }
            first.get_or_insert(d);
        }
        if let Some(mut d) = first {
            if n == last {
                if hi < lo {
                    d.shortfall = Some(shortfall(req, &proto, fa, required));
                }
                return Ok(d);
            }
            fallback = Some(d);
        }
    }
    fallback.ok_or(NoFilter::Unrealisable)
}

impl FilterDesign {
    /// The same filter with its corner moved to `corner`, every section realised again: used
    /// when the first-order pole is fixed by parts outside the filter. `None` when the corner
    /// lies outside the interval the rule allows, a section cannot be built, or the rounded
    /// cascade misses the rejection or the in-band error there.
    pub fn at_corner(&self, req: &Request, corner: f64) -> Option<FilterDesign> {
        let [lo, hi] = self.corner_range;
        if !(corner >= lo && corner <= hi) || self.shortfall.is_some() {
            return None;
        }
        let proto = prototype(self.response, self.order)?;
        let cfg = PartsConfig::of(&req.parts);
        let d = build(
            req,
            &proto,
            corner,
            self.corner_range,
            self.alias_frequency,
            self.required_db,
            self.ripple_exceeds_request,
            cfg,
        )?;
        (d.rounded_db >= d.required_db && d.passband_error_db <= d.passband_allowed_db + 1e-9).then_some(d)
    }

    /// The cascade inverts (an odd number of multiple-feedback sections).
    pub fn inverts(&self) -> bool {
        self.sections.iter().filter(|s| s.kind == SectionKind::MultipleFeedback).count() % 2 == 1
    }

    /// Any section needs the reference `fref`.
    pub fn uses_reference(&self) -> bool {
        self.sections.iter().any(|s| s.kind == SectionKind::MultipleFeedback)
    }

    /// Loss of the rounded cascade at `f` Hz relative to DC, dB (ideal amplifiers).
    pub fn rounded_loss_db(&self, f: f64) -> f64 {
        let (real, pairs) = rounded_cascade(&self.realised);
        cascade_loss_db(real, &pairs, f)
    }

    /// Largest in-band error of the rounded cascade up to `band_high`, dB.
    pub fn rounded_passband_error_db(&self, band_high: f64) -> f64 {
        let (real, pairs) = rounded_cascade(&self.realised);
        passband_error(real, &pairs, band_high)
    }
}

/// Largest |loss| of a cascade over three decades up to `band_high`, dB.
fn passband_error(real: Option<f64>, pairs: &[Pair], band_high: f64) -> f64 {
    (0..=64)
        .map(|i| band_high * 10f64.powf(-3.0 * (64 - i) as f64 / 64.0))
        .map(|f| cascade_loss_db(real, pairs, f).abs())
        .fold(0.0, f64::max)
}

/// Realises every section of `proto` at `corner` and evaluates the rounded cascade.
#[allow(clippy::too_many_arguments)]
fn build(
    req: &Request, proto: &Prototype, corner: f64, range: [f64; 2], fa: f64, required: f64, ripple_over: bool,
    cfg: PartsConfig,
) -> Option<FilterDesign> {
    let spec = &req.filter;
    let mut kinds: Vec<SectionKind> = vec![SectionKind::of(spec.topology); proto.pairs.len()];
    if spec.topology == FilterTopology::MultipleFeedback && req.keep_polarity && proto.pairs.len() % 2 == 1 {
        kinds[0] = SectionKind::SallenKey;
    }
    let mut wanted: Vec<(SectionKind, f64, f64)> = Vec::new();
    if let Some(r) = proto.real {
        wanted.push((SectionKind::FirstOrder, r * corner, 0.0));
    }
    for (p, k) in proto.pairs.iter().zip(kinds) {
        wanted.push((k, p.fsf * corner, p.q));
    }
    let mut realised = Vec::new();
    let mut reports = Vec::new();
    let mut gbw_min: f64 = 0.0;
    for &(kind, f, q) in &wanted {
        let r = realise(kind, f, q, cfg)?;
        let rel = |a: f64, b: f64| if b != 0.0 { a / b - 1.0 } else { 0.0 };
        gbw_min = gbw_min.max(match kind {
            SectionKind::FirstOrder => FOLLOWER_GBW_FACTOR * r.f_n,
            SectionKind::SallenKey => SECTION_GBW_FACTOR * r.q * r.f_n,
            SectionKind::MultipleFeedback => SECTION_GBW_FACTOR * 2.0 * r.q * r.f_n,
        });
        reports.push(SectionReport {
            kind,
            f_n: f,
            q,
            f_n_rounded: r.f_n,
            q_rounded: r.q,
            f_n_error: rel(r.f_n, f),
            q_error: rel(r.q, q),
            in_gain_stage: false,
        });
        realised.push(r);
    }
    let (real, pairs) = rounded_cascade(&realised);
    let passband_error_db = passband_error(real, &pairs, req.source.band_high);
    Some(FilterDesign {
        response: spec.response,
        order: proto.order,
        topology: spec.topology,
        corner,
        corner_range: range,
        sections: reports,
        alias_frequency: fa,
        required_db: required,
        rounded_db: cascade_loss_db(real, &pairs, fa),
        passband_error_db,
        passband_allowed_db: if ripple_over { proto.ripple_db } else { spec.passband_error.max(proto.ripple_db) },
        gbw_min,
        shortfall: None,
        ripple_exceeds_request: ripple_over,
        realised,
    })
}

/// The rounded sections as a cascade in Hz.
fn rounded_cascade(realised: &[Realised]) -> (Option<f64>, Vec<Pair>) {
    let real = realised.iter().find(|r| r.kind == SectionKind::FirstOrder).map(|r| r.f_n);
    let pairs =
        realised.iter().filter(|r| r.kind != SectionKind::FirstOrder).map(|r| Pair { fsf: r.f_n, q: r.q }).collect();
    (real, pairs)
}

/// The ways out when `proto` (the highest order allowed) cannot meet the rule.
fn shortfall(req: &Request, proto: &Prototype, fa: f64, required: f64) -> Shortfall {
    let spec = &req.filter;
    let bh = req.source.band_high;
    let (xp, _) = proto.pass_edge(spec.passband_error);
    let lo = bh / xp;
    let reached_db = proto.loss_db(fa / lo);
    let rate_needed = proto.stop_edge(required).map_or(f64::INFINITY, |xs| bh + lo * xs * CORNER_MARGIN);
    let order_with_oversampling = if req.destination.converter.samples() {
        let fa2 = PROPOSED_OVERSAMPLING * req.destination.sample_rate - bh;
        (1..=spec.max_order).find(|&n| {
            prototype(spec.response, n).is_some_and(|p| {
                let lo = bh / p.pass_edge(spec.passband_error).0;
                p.stop_edge(required).is_some_and(|xs| fa2 / xs >= lo * CORNER_MARGIN)
            })
        })
    } else {
        None
    };
    let feasible = |n: u32, fa: f64| {
        prototype(spec.response, n).is_some_and(|p| {
            let lo = bh / p.pass_edge(spec.passband_error).0;
            p.stop_edge(required).is_some_and(|xs| fa / xs >= lo)
        })
    };
    let order_needed = spec.order.and_then(|_| (1..=spec.max_order).find(|&n| feasible(n, fa)));
    Shortfall {
        order_needed,
        order: proto.order,
        reached_db,
        rate_needed,
        order_with_oversampling,
        level_db_needed: reached_db - full_range_db(req.destination.bits),
    }
}

impl FilterDesign {
    /// The filter's figures and its sections as designed and as built; `alias` is the
    /// (required, achieved) rejection the analyses found on the whole rounded circuit, which
    /// replaces the sections' own figures when present.
    pub fn figures(&self, alias: Option<(f64, f64)>) -> Block {
        use crate::figures::{format_sig_fixed, Table};
        let (required, achieved) = alias.unwrap_or((self.required_db, self.rounded_db));
        let hz = |x: f64| format(x, Quantity::Frequency);
        let rows = self
            .sections
            .iter()
            .enumerate()
            .map(|(k, s)| {
                let kind = match s.kind {
                    SectionKind::FirstOrder if s.in_gain_stage => "first-order pole in the gain stage",
                    SectionKind::FirstOrder => "first-order RC and follower",
                    SectionKind::SallenKey => "Sallen-Key",
                    SectionKind::MultipleFeedback => "multiple feedback",
                };
                let q =
                    |x: f64| if s.kind == SectionKind::FirstOrder { "—".to_string() } else { format_sig_fixed(x, 3) };
                let change = format!("{:+.2} %", 100.0 * s.f_n_error);
                vec![
                    (k + 1).to_string(),
                    kind.to_string(),
                    hz(s.f_n),
                    hz(s.f_n_rounded),
                    q(s.q),
                    q(s.q_rounded),
                    change,
                ]
            })
            .collect();
        let header = ["Section", "Built as", "f_n wanted", "f_n as built", "Q wanted", "Q as built", "f_n change"];
        let table = Table {
            header: header.map(String::from).to_vec(),
            numeric: vec![true, false, true, true, true, true, true],
            rows,
        };
        let error = format!(
            "{} dB of {} dB allowed",
            format_sig_fixed(self.passband_error_db, 2),
            format_sig_fixed(self.passband_allowed_db, 2)
        );
        Block::new("filter", "Anti-alias filter")
            .text("Response", self.response.name())
            .text("Order", self.order.to_string())
            .quantity("Corner", self.corner, Quantity::Frequency)
            .quantity("First frequency folding into the band", self.alias_frequency, Quantity::Frequency)
            .decibels("Rejection needed there", Some(required))
            .decibels("Rejection of the built filter there", Some(achieved))
            .text("In-band error at the band's top", error)
            .table(table)
    }
}
