//! Normalised low-pass prototypes: the poles of each response family, grouped into
//! second-order sections (and one first-order section for odd orders), and the magnitude
//! response of such a cascade.
//!
//! * **Flat (Butterworth):** poles evenly spaced on the unit circle; −3 dB at 1.
//!   Section k (1 … ⌊n/2⌋) of order n has f_n = 1 and Q = 1/(2·sin((2k−1)π/(2n))); odd
//!   orders add a real pole at 1.
//! * **Linear phase (Bessel):** the roots of the reverse Bessel polynomial
//!   θ_n(s) = Σ a_k s^k with a_k = (2n−k)!/(2^(n−k)·k!·(n−k)!), found by the
//!   Aberth–Ehrlich iteration (no table), which gives the delay-normalised poles; they are
//!   then scaled so that the cascade is −3 dB at 1, as the published tables are.
//! * **Steep (Chebyshev, 0.5 dB ripple):** with ε = √(10^(r/10) − 1) and
//!   a = asinh(1/ε)/n, pole k is −sinh(a)·sin θ_k ± j·cosh(a)·cos θ_k, θ_k = (2k−1)π/(2n);
//!   normalised to the ripple edge (the response is at the bottom of the ripple at 1).
//!
//! Each section is given as its pole frequency factor (f_n relative to the normalisation
//! frequency, "FSF") and its Q = |p|/(2·|Re p|). Sections are listed in ascending Q, which is
//! the order the cascade is built in (highest Q last). Every section has unity DC gain, so
//! the cascade's DC gain is one; a Chebyshev filter of even order therefore peaks
//! `ripple_db` above its DC gain inside the band.

use num_complex::Complex;

use crate::request::ResponseKind;

/// Ripple of the steep response, dB.
pub const CHEBYSHEV_RIPPLE_DB: f64 = 0.5;

/// One second-order section of a normalised prototype.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Pair {
    /// Pole frequency relative to the normalisation frequency.
    pub fsf: f64,
    pub q: f64,
}

/// A normalised prototype of one response and order.
#[derive(Debug, Clone, PartialEq)]
pub struct Prototype {
    pub response: ResponseKind,
    pub order: u32,
    /// The first-order section's pole frequency (odd orders).
    pub real: Option<f64>,
    /// Second-order sections in ascending Q.
    pub pairs: Vec<Pair>,
    /// Passband ripple, dB (0 for the monotone families).
    pub ripple_db: f64,
}

/// The prototype of `response` and `order` (1 … 12); `None` for `ResponseKind::None`, an
/// order outside that range or a root search that did not converge.
pub fn prototype(response: ResponseKind, order: u32) -> Option<Prototype> {
    if !(1..=12).contains(&order) {
        return None;
    }
    let n = order as usize;
    let poles: Vec<Complex<f64>> = match response {
        ResponseKind::None => return None,
        ResponseKind::Flat => (1..=n)
            .map(|k| {
                let th = (2 * k - 1) as f64 * std::f64::consts::PI / (2 * n) as f64;
                Complex::new(-th.sin(), th.cos())
            })
            .collect(),
        ResponseKind::Steep => {
            let eps = (10f64.powf(CHEBYSHEV_RIPPLE_DB / 10.0) - 1.0).sqrt();
            let a = (1.0 / eps).asinh() / n as f64;
            (1..=n)
                .map(|k| {
                    let th = (2 * k - 1) as f64 * std::f64::consts::PI / (2 * n) as f64;
                    Complex::new(-a.sinh() * th.sin(), a.cosh() * th.cos())
                })
                .collect()
        }
        ResponseKind::LinearPhase => bessel_poles(n)?,
    };
    let mut real = None;
    let mut pairs = Vec::new();
    for p in &poles {
        if p.re >= 0.0 || !p.re.is_finite() || !p.im.is_finite() {
            return None;
        }
        if p.im.abs() <= 1e-9 * p.norm() {
            real = Some(-p.re);
        } else if p.im > 0.0 {
            pairs.push(Pair { fsf: p.norm(), q: p.norm() / (2.0 * -p.re) });
        }
    }
    if pairs.len() != n / 2 || real.is_some() != (n % 2 == 1) {
        return None;
    }
    crate::order::sort_by(&mut pairs, |a, b| a.q.total_cmp(&b.q));
    let ripple_db = if response == ResponseKind::Steep { CHEBYSHEV_RIPPLE_DB } else { 0.0 };
    let mut p = Prototype { response, order, real, pairs, ripple_db };
    if response == ResponseKind::LinearPhase {
        // Scale the delay-normalised poles so that the cascade is −3 dB at 1.
        let w3 = p.frequency_at_loss(10.0 * 2f64.log10(), 1e-3, 1e3)?;
        p.real = p.real.map(|r| r / w3);
        for s in &mut p.pairs {
            s.fsf /= w3;
        }
    }
    Some(p)
}

impl Prototype {
    /// Loss of the cascade at normalised frequency `x`, dB relative to its DC gain (positive
    /// = below the DC gain).
    pub fn loss_db(&self, x: f64) -> f64 {
        cascade_loss_db(self.real, &self.pairs, x)
    }

    /// The normalised frequency, between `lo` and `hi`, at which the loss (on the monotone
    /// part of the response) first reaches `db`; `None` when it is not bracketed.
    pub fn frequency_at_loss(&self, db: f64, lo: f64, hi: f64) -> Option<f64> {
        bisect_loss(|x| self.loss_db(x), db, lo, hi)
    }

    /// Highest normalised frequency up to which the in-band error stays within `tol_db`, and
    /// whether the response's own ripple exceeds `tol_db` (then the ripple edge, 1, is
    /// returned and the in-band error is the ripple).
    pub fn pass_edge(&self, tol_db: f64) -> (f64, bool) {
        if self.ripple_db > 0.0 {
            if tol_db < self.ripple_db {
                return (1.0, true);
            }
            return (self.frequency_at_loss(tol_db, 1.0, 1e3).unwrap_or(1.0), false);
        }
        (self.frequency_at_loss(tol_db, 1e-6, 1e3).unwrap_or(1e-6), false)
    }

    /// Lowest normalised frequency at which the loss reaches `db` (the stop edge), searched
    /// above the passband; `None` beyond 10⁶.
    pub fn stop_edge(&self, db: f64) -> Option<f64> {
        let lo = if self.ripple_db > 0.0 { 1.0 } else { 1e-6 };
        if self.loss_db(lo) >= db {
            return Some(lo);
        }
        let mut hi = 2.0;
        while self.loss_db(hi) < db {
            hi *= 2.0;
            if hi > 1e6 {
                return None;
            }
        }
        bisect_loss(|x| self.loss_db(x), db, lo, hi)
    }
}

/// Loss of a cascade of unity-gain sections at `x` (same units as the sections' f_n), dB.
pub fn cascade_loss_db(real: Option<f64>, pairs: &[Pair], x: f64) -> f64 {
    let mut mag2 = 1.0;
    if let Some(r) = real {
        let u = x / r;
        mag2 *= 1.0 / (1.0 + u * u);
    }
    for p in pairs {
        let u = x / p.fsf;
        let re = 1.0 - u * u;
        let im = u / p.q;
        mag2 *= 1.0 / (re * re + im * im);
    }
    -10.0 * mag2.log10()
}

/// Bisection on a log scale for the first frequency in `[lo, hi]` where `loss` reaches `db`,
/// assuming `loss` rises through `db` once there.
fn bisect_loss(loss: impl Fn(f64) -> f64, db: f64, lo: f64, hi: f64) -> Option<f64> {
    if !(lo > 0.0 && hi > lo) || loss(lo) > db || loss(hi) < db {
        return None;
    }
    let (mut a, mut b) = (lo.ln(), hi.ln());
    for _ in 0..100 {
        let m = 0.5 * (a + b);
        if loss(m.exp()) < db {
            a = m;
        } else {
            b = m;
        }
        if b - a < 1e-13 {
            break;
        }
    }
    Some((0.5 * (a + b)).exp())
}

/// Coefficients a_0 … a_n of the reverse Bessel polynomial of order `n` (a_n = 1).
pub fn reverse_bessel(n: usize) -> Vec<f64> {
    // a_k = (2n−k)! / (2^(n−k) k! (n−k)!), built from a_n = 1 downward:
    // a_{k−1} / a_k = (2n−k+1)·k / (2·(n−k+1)).
    let mut a = vec![0.0; n + 1];
    a[n] = 1.0;
    for k in (1..=n).rev() {
        a[k - 1] = a[k] * ((2 * n - k + 1) * k) as f64 / (2 * (n - k + 1)) as f64;
    }
    a
}

/// Roots of the reverse Bessel polynomial of order `n` (the delay-normalised Bessel poles)
/// by the Aberth–Ehrlich simultaneous iteration.
fn bessel_poles(n: usize) -> Option<Vec<Complex<f64>>> {
    let a = reverse_bessel(n);
    let eval = |z: Complex<f64>| {
        let (mut p, mut d) = (Complex::new(0.0, 0.0), Complex::new(0.0, 0.0));
        for &c in a.iter().rev() {
            d = d * z + p;
            p = p * z + c;
        }
        (p, d)
    };
    // Start on a circle of the roots' geometric mean radius, rotated off the axes.
    let r = a[0].powf(1.0 / n as f64);
    let mut z: Vec<Complex<f64>> =
        (0..n).map(|k| Complex::from_polar(r, 2.0 * std::f64::consts::PI * k as f64 / n as f64 + 0.4)).collect();
    for _ in 0..500 {
        let mut moved: f64 = 0.0;
        for k in 0..n {
            let (p, d) = eval(z[k]);
            if p.norm() == 0.0 {
                continue;
            }
            let w = p / d;
            let s: Complex<f64> = (0..n).filter(|&j| j != k).map(|j| Complex::new(1.0, 0.0) / (z[k] - z[j])).sum();
            let step = w / (Complex::new(1.0, 0.0) - w * s);
            if step.re.is_finite() && step.im.is_finite() {
                z[k] -= step;
                moved = moved.max(step.norm() / z[k].norm().max(1e-300));
            }
        }
        if moved < 1e-15 {
            break;
        }
    }
    // Conjugate pairs exactly conjugate, real roots exactly real.
    for v in &mut z {
        if v.im.abs() < 1e-9 * v.norm() {
            v.im = 0.0;
        }
    }
    z.iter().all(|v| v.re < 0.0 && v.re.is_finite() && v.im.is_finite()).then_some(z)
}
