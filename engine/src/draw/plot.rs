//! Plots of a design's analyses as standalone SVG: pure functions from [`Design`] to text.
//!
//! * [`response`]: magnitude (dB) and phase (°) against log frequency, two panels sharing the
//!   frequency axis; the band of interest shaded, the −3 dB points, the sample rate f_s, the
//!   Nyquist frequency f_s/2 and f_s − band_high (the lowest frequency that folds back into
//!   the band) marked and named.
//! * [`transfer`]: output against sensor from `analysis.dc.transfer` — the static sweep for
//!   DC coupling, the mid-band transfer for AC coupling (the title says which) — with the
//!   converter range, the headroom bands, the amplifier's output limits (where it clips) and
//!   the sensor's min and max.
//! * [`tolerance`]: the two Monte Carlo histograms (output at the sensor's min and at its max),
//!   each beside the converter limit and headroom limit near it, with the worst case; the
//!   yield in the title.
//! * [`noise`]: output noise density (V/√Hz, log-log) across the integration band, and the LSB
//!   level: the flat density that integrates to one LSB rms over that band,
//!   LSB/√(f_hi − f_lo).
//!
//! Each returns `None` when the design has no analysis, and otherwise a drawing, whatever
//! the data (empty, NaN, a single point, zero ranges): missing data is said in the panel.
//!
//! **Style**, shared with the schematic: white background, black lines and text, one accent
//! colour (the data), grey for markers, light tints for shaded bands; text of
//! [`PlotConfig::font_size`] (12–13 px reads well on screen and printed). Axis titles name
//! their unit ("Frequency (Hz)"), tick labels carry SI prefixes from [`crate::units::format`]
//! ("100 Hz", "1 kHz", "1.65 V"). Linear axes step 1-2-5 × 10^k, log axes mark decades with
//! 2/5 sub-ticks when few decades show (see [`axis`]); labels that would crowd are thinned,
//! and no text overlaps another (every box is recorded in [`Plot::texts`]). Markers are thin,
//! dashed and drawn under the curves; their names sit in one row above the panel, spread
//! apart with short leaders where markers crowd, and their values are in the legend under
//! the plot. The drawing grows past [`PlotConfig::height`] (or width) only when the legend
//! or a large font would otherwise squeeze the panels.
//!
//! **Why the axes are hand-written.** A plotting crate's SVG backend lays text out through a
//! font backend: font-kit does not build for `wasm32-unknown-unknown`, and ab_glyph needs a
//! font file embedded in the binary, which would cost too much of the app's 250 KB
//! first-load budget. Axes, ticks and legends are a few hundred lines on top of the
//! schematic's SVG writer ([`super::svg`]: escaping, text-box estimate, overlap records), so
//! the plots share its text metrics and overlap checks.
//!
//! Module map: [`axis`] (scales, tick values: public, for callers and tests); `ticks` (which
//! ticks carry labels, and the labels); `legend` (legend flow, marker tags); `page` (the
//! drawing: layers, panels, curves, texts); `layout` (geometry shared by the plots); one
//! module per plot: `frequency`, `mapping`, `histograms`, `density`.
//!
//! Output follows W3C SVG 1.1 like the schematic: one root in the SVG namespace with width,
//! height and viewBox, presentation attributes only, no script, id or external reference.

pub mod axis;
mod density;
mod frequency;
mod histograms;
mod layout;
mod legend;
mod mapping;
mod page;
mod ticks;

use super::svg::{BoxRect, Segment};
use crate::design::Design;

pub use axis::{angle_ticks, bounds_for, linear_ticks, log_ticks, nice_bounds, step_125, Axis, LogTicks, Scale};

/// Options of the plots; `Default` gives 720 × 360 px with 12 px text.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotConfig {
    /// Width of the drawing, px (clamped to 240 … 4000).
    pub width: f64,
    /// Height of the drawing, px (clamped to 160 … 4000; grows when the legend needs room).
    pub height: f64,
    /// Size of tick labels, legends and tags, px (clamped to 8 … 24); the title is 1 px larger.
    pub font_size: f64,
}

impl Default for PlotConfig {
    fn default() -> Self {
        PlotConfig { width: 720.0, height: 360.0, font_size: 12.0 }
    }
}

/// A drawing and, for overlap checks, every text box and recorded stroke placed in it.
/// Strokes carry what they draw as `net`: `"frame"` (panel edges), the data
/// (`"magnitude"`, `"phase"`, `"transfer"`, `"histogram"`, `"density"`) and the marks
/// (`"marker"`, `"converter"`, `"limit"`, `"sensor"`, `"worst"`, `"lsb"`). Grid lines are
/// not recorded.
#[derive(Debug, Clone, PartialEq)]
pub struct Plot {
    pub svg: String,
    pub texts: Vec<BoxRect>,
    pub wires: Vec<Segment>,
}

/// Magnitude and phase of the response from the sensor to the converter input against log
/// frequency, with the band, the −3 dB points, f_s, f_s/2 and f_s − band_high marked.
pub fn response(d: &Design, cfg: &PlotConfig) -> Option<Plot> {
    let a = d.analysis.as_ref()?;
    Some(frequency::draw(d, a, &cfg.usable()))
}

/// Output against sensor (the mid-band transfer for AC coupling), with the converter range,
/// headroom bands, output limits and the sensor's min and max.
pub fn transfer(d: &Design, cfg: &PlotConfig) -> Option<Plot> {
    let a = d.analysis.as_ref()?;
    Some(mapping::draw(d, a, &cfg.usable()))
}

/// The Monte Carlo histograms of the output at the sensor's min and max against the
/// converter and headroom limits; the yield in the title.
pub fn tolerance(d: &Design, cfg: &PlotConfig) -> Option<Plot> {
    let a = d.analysis.as_ref()?;
    Some(histograms::draw(d, a, &cfg.usable()))
}

/// Output noise density across the integration band (log-log) against the LSB level
/// LSB/√(f_hi − f_lo).
pub fn noise(d: &Design, cfg: &PlotConfig) -> Option<Plot> {
    let a = d.analysis.as_ref()?;
    Some(density::draw(d, a, &cfg.usable()))
}

impl PlotConfig {
    /// The options clamped to what draws sensibly; non-finite values take the defaults.
    fn usable(&self) -> PlotConfig {
        let d = PlotConfig::default();
        let pick = |v: f64, def: f64, lo: f64, hi: f64| if v.is_finite() { v.clamp(lo, hi) } else { def };
        PlotConfig {
            width: pick(self.width, d.width, 240.0, 4000.0),
            height: pick(self.height, d.height, 160.0, 4000.0),
            font_size: pick(self.font_size, d.font_size, 8.0, 24.0),
        }
    }
}
