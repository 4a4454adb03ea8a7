//! The feedback law ([`super::law`]) closed around the linear model of a trim point: the
//! closed-loop stability verdict, the demand the open-loop unstable modes make of the loop,
//! and the margins of each loop broken at its actuator, one at a time, all others closed, as
//! MIL-F-9490D asks of flight-control systems.
//!
//! **Loop model.** States: the linear model (u, w, q, theta), height, the speed and height
//! integrators of the law, a first-order thrust lag per rotor group, a first-order servo per
//! elevator (bandwidth `elevator_bandwidth_rad_s`, 0 = positioned at once) and, when the
//! sensor-plus-computation delay `delay_s` is positive, a first-order Pade approximant
//! `(1 - s T / 2) / (1 + s T / 2)` of it on each actuator command. The law is taken frozen at
//! the point (frozen-point analysis of gain-scheduled control): its feedforward and gains do
//! not move with the state, and the pitch offset's limits and the redistribution at limits are
//! left out (they act only at a limit). The plant's control columns may be scaled by a
//! control-effectiveness factor while the law keeps the nominal model (plant mismatch).
//!
//! Breaking the loop at actuator `j` gives the loop `(A_j, b_j, c_j)`; in the negative-feedback
//! convention `L_j(s) = -c_j (sI - A_j)^-1 b_j`, and `det(sI - A_cl) = det(sI - A_j) (1 + L_j)`
//! with `A_cl` the whole closed loop. So, once the eigenvalues `mu` of `A_cl` and `lambda_j`
//! of `A_j` are known (one reduction per loop and point),
//! `L_j(jw) = prod (jw - mu_i) / prod (jw - lambda_ji) - 1`, evaluated with no allocation.
//!
//! **Margins** (the closed loop being stable; every margin is null otherwise). They follow the
//! Nyquist criterion whatever the number of unstable open-loop poles, because they are found
//! directly as the smallest perturbation that puts a closed-loop root on the imaginary axis:
//! - gain margins: the smallest gain factor `k > 1` (up, dB > 0) and the largest `0 < k < 1`
//!   (down, dB < 0) with `1 + k L(jw) = 0`, i.e. `k = -1 / L` where `L(jw)` is real and
//!   negative (w = 0 included); null where no such gain exists within +-40 dB;
//! - phase margin: the smallest phase lag `phi` in (0, 360) deg with `1 + e^(-j phi) L(jw) = 0`,
//!   at the gain crossovers `|L| = 1`: `phi = (arg L + 180 deg) mod 360 deg`;
//! - delay margin: the smallest pure delay `T` with `1 + e^(-j w T) L(jw) = 0`, `phi / w` at
//!   each gain crossover;
//! - symmetric disk margin (Seiler, Packard and Gahinet, "An introduction to disk margins",
//!   IEEE Control Systems Magazine 40(5), 2020): `alpha = 1 / sup_w |S - T| / 2` with
//!   `S = 1 / (1 + L)`, `T = L / (1 + L)`; the loop stays stable for every simultaneous gain
//!   and phase change `f = (1 + delta / 2) / (1 - delta / 2)`, `|delta| < alpha`, that is the
//!   gains `(2 - alpha) / (2 + alpha) .. (2 + alpha) / (2 - alpha)` and the phases
//!   `+-2 atan(alpha / 2)`. Strictly proper loops have `alpha <= 2`; at `alpha = 2` the gain
//!   equivalent is unbounded (null).
//!
//! The response is sampled on a logarithmic grid from 1e-3 to 1e3 rad/s, every crossing
//! refined by bisection in log frequency, and the peak of `|S - T|` refined by golden-section
//! search around the largest sample and around each closed-loop root's frequency.

use nalgebra::{Complex, DMatrix, DVector};
use serde::Serialize;

use super::law::{allocation, feedback_inputs, law, FeedbackGains, LawInput};
use crate::dynamics::{Controls, State};
use crate::linear::{LinearModel, Mode};
use crate::vehicle::Vehicle;

/// Lowest frequency of the search (rad/s).
pub const OMEGA_MIN_RAD_S: f64 = 1e-3;
/// Highest frequency of the search (rad/s).
pub const OMEGA_MAX_RAD_S: f64 = 1e3;
const POINTS_PER_DECADE: usize = 30;
/// A loop whose gain stays below this everywhere (-40 dB) closes nothing of consequence.
pub const IN_LOOP_GAIN: f64 = 0.01;
/// Gain margins beyond this (dB, either way) are reported as null: no gain change a loop can
/// meet destabilises it (such values come from near-cancelled or near-neutral dynamics).
pub const MAX_GAIN_MARGIN_DB: f64 = 40.0;
/// Control-effectiveness factors of the plant-mismatch cases (the law keeps the nominal model).
pub const MISMATCH_EFFECTIVENESS: [f64; 2] = [0.8, 1.2];
/// Loop crossover demanded per unit of an unstable root (common practice, no source).
pub const CROSSOVER_PER_UNSTABLE_ROOT: f64 = 3.0;

/// What the loop model adds to the linear model and the law.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LoopSettings {
    /// Total sensor-plus-computation delay on every actuator command (s); 0 leaves it out.
    pub delay_s: f64,
    /// Bandwidth of the elevator servos (rad/s); 0 positions them at once.
    pub elevator_bandwidth_rad_s: f64,
    /// Factor on the plant's control effectiveness (1 = the model the law was built on).
    pub effectiveness: f64,
}

impl Default for LoopSettings {
    fn default() -> Self {
        LoopSettings::from_file(&crate::scenario::FlightFile::default())
    }
}

impl LoopSettings {
    /// The loop model of a scenario's `[flight]` table, nominal effectiveness.
    pub fn from_file(f: &crate::scenario::FlightFile) -> LoopSettings {
        LoopSettings {
            delay_s: f.loop_delay_s,
            elevator_bandwidth_rad_s: f.elevator_bandwidth_rad_s,
            effectiveness: 1.0,
        }
    }
}

/// Margins of one loop broken at one actuator.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoopMargin {
    /// Loops of the law that drive this actuator (speed, height, pitch attitude).
    pub loop_name: String,
    /// The actuator where the loop is broken (`thrust <group>`, `elevator <name>`).
    pub actuator: String,
    /// Whether the law closes a loop of consequence through this actuator (peak gain at
    /// least -40 dB); margins are null otherwise.
    pub in_loop: bool,
    /// Gain increase to instability (dB, > 0); null where no gain increase destabilises.
    pub gain_margin_db: Option<f64>,
    /// Gain decrease to instability (dB, < 0); null where no gain decrease destabilises.
    pub gain_reduction_margin_db: Option<f64>,
    /// Smallest phase lag that destabilises (deg, 0..360).
    pub phase_margin_deg: Option<f64>,
    /// Smallest pure delay that destabilises (s).
    pub delay_margin_s: Option<f64>,
    /// Gain-crossover frequency of the phase margin (rad/s).
    pub crossover_rad_s: Option<f64>,
    /// Phase-crossover frequency of the gain margin (rad/s).
    pub phase_crossover_rad_s: Option<f64>,
    /// Symmetric disk margin alpha (-).
    pub disk_margin: Option<f64>,
    /// Gain equivalent of the disk margin, +- (dB); null where unbounded.
    pub disk_gain_margin_db: Option<f64>,
    /// Phase equivalent of the disk margin, +- (deg).
    pub disk_phase_margin_deg: Option<f64>,
    /// Frequency where the disk margin is set (rad/s; null at infinite frequency).
    pub disk_frequency_rad_s: Option<f64>,
    /// Whether the whole closed loop is stable at this point.
    pub closed_loop_stable: bool,
    /// Smallest disk margin over the nominal plant and the mismatch cases (0 where a case's
    /// closed loop is unstable).
    pub worst_disk_margin: Option<f64>,
    /// Control-effectiveness factor of the worst case.
    pub worst_effectiveness: f64,
    /// Whether the closed loop is stable in every mismatch case.
    pub mismatch_stable: bool,
}

/// An unstable open-loop mode and what it demands of the loop.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OpenLoopDemand {
    /// Mode name.
    pub mode: String,
    /// Real part (1/s, > 0).
    pub real_per_s: f64,
    /// Time to double amplitude (s).
    pub time_to_double_s: f64,
    /// Loop crossover the mode demands, 3 x |root| (rad/s; common practice).
    pub crossover_demand_rad_s: f64,
}

/// The unstable open-loop modes of a point with the crossover each demands.
pub fn open_loop_demands(modes: &[Mode]) -> Vec<OpenLoopDemand> {
    modes
        .iter()
        .filter(|m| m.real_per_s > 0.0)
        .map(|m| OpenLoopDemand {
            mode: m.name.clone(),
            real_per_s: m.real_per_s,
            time_to_double_s: std::f64::consts::LN_2 / m.real_per_s,
            crossover_demand_rad_s: CROSSOVER_PER_UNSTABLE_ROOT * m.natural_freq_rad_s,
        })
        .collect()
}

/// Margins of a loop transfer function from its frequency response.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct FrequencyMargins {
    /// Smallest destabilising gain increase (dB).
    pub gain_margin_db: Option<f64>,
    /// Smallest destabilising gain decrease (dB, < 0).
    pub gain_reduction_margin_db: Option<f64>,
    /// Smallest destabilising phase lag (deg).
    pub phase_margin_deg: Option<f64>,
    /// Smallest destabilising delay (s).
    pub delay_margin_s: Option<f64>,
    /// Gain-crossover frequency of the phase margin (rad/s).
    pub crossover_rad_s: Option<f64>,
    /// Phase-crossover frequency of the gain margin (rad/s).
    pub phase_crossover_rad_s: Option<f64>,
    /// Symmetric disk margin (-).
    pub disk_margin: Option<f64>,
    /// Frequency of the disk margin (rad/s; null at infinite frequency).
    pub disk_frequency_rad_s: Option<f64>,
    /// Largest |L| over the samples (-).
    pub peak_gain: f64,
}

impl FrequencyMargins {
    /// Gain equivalent of the disk margin (dB), null where unbounded.
    pub fn disk_gain_margin_db(&self) -> Option<f64> {
        self.disk_margin.and_then(disk_gain_db)
    }

    /// Phase equivalent of the disk margin (deg).
    pub fn disk_phase_margin_deg(&self) -> Option<f64> {
        self.disk_margin.map(disk_phase_deg)
    }
}

/// Gain equivalent `20 log10((2 + a) / (2 - a))` of a symmetric disk margin `a` (dB).
pub fn disk_gain_db(a: f64) -> Option<f64> {
    (a < 2.0 - 1e-12).then(|| 20.0 * ((2.0 + a) / (2.0 - a)).log10())
}

/// Phase equivalent `2 atan(a / 2)` of a symmetric disk margin `a` (deg).
pub fn disk_phase_deg(a: f64) -> f64 {
    2.0 * (0.5 * a).atan().to_degrees()
}

/// The smallest symmetric disk margin that covers both a gain margin (dB) and a phase margin
/// (deg): the disk's gain and phase equivalents then reach both.
pub fn disk_margin_for(gain_margin_db: f64, phase_margin_deg: f64) -> f64 {
    let g = 10f64.powf(gain_margin_db / 20.0);
    let from_gain = 2.0 * (g - 1.0) / (g + 1.0);
    let from_phase = 2.0 * (0.5 * phase_margin_deg.to_radians()).tan();
    from_gain.max(from_phase)
}

/// Root of `f` in log frequency between `lo` and `hi`, where `f` changes sign: regula falsi
/// with the Illinois modification (the bracket is kept, so it converges like bisection at
/// worst and superlinearly on smooth functions), to 1e-12 relative in frequency.
fn refine<F: Fn(f64) -> f64>(f: F, lo: f64, hi: f64) -> f64 {
    let (mut a, mut b) = (lo.ln(), hi.ln());
    let (mut fa, mut fb) = (f(lo), f(hi));
    if fa == 0.0 {
        return lo;
    }
    if fb == 0.0 || (fa > 0.0) == (fb > 0.0) {
        return hi;
    }
    let mut side = 0i8;
    for _ in 0..100 {
        let c = if (fb - fa).abs() > 0.0 {
            (a * fb - b * fa) / (fb - fa)
        } else {
            0.5 * (a + b)
        };
        let c = if c > a.min(b) && c < a.max(b) {
            c
        } else {
            0.5 * (a + b)
        };
        let fc = f(c.exp());
        if fc == 0.0 {
            return c.exp();
        }
        if (fc > 0.0) == (fb > 0.0) {
            b = c;
            fb = fc;
            if side == -1 {
                fa *= 0.5;
            }
            side = -1;
        } else {
            a = c;
            fa = fc;
            if side == 1 {
                fb *= 0.5;
            }
            side = 1;
        }
        if (a - b).abs() < 1e-12 {
            break;
        }
    }
    (0.5 * (a + b)).exp()
}

/// Golden-section search for the largest `f` in log frequency on `[lo, hi]`: (w, f(w)).
fn peak<F: Fn(f64) -> f64>(f: F, lo: f64, hi: f64) -> (f64, f64) {
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let (mut a, mut b) = (lo.ln(), hi.ln());
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut fc, mut fd) = (f(c.exp()), f(d.exp()));
    for _ in 0..60 {
        // The peak is flat: a bracket of 1e-5 in log frequency fixes its value to ~1e-10.
        if b - a < 1e-5 {
            break;
        }
        if fc > fd {
            b = d;
            d = c;
            fd = fc;
            c = b - r * (b - a);
            fc = f(c.exp());
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + r * (b - a);
            fd = f(d.exp());
        }
    }
    if fc > fd {
        (c.exp(), fc)
    } else {
        (d.exp(), fd)
    }
}

fn finite(z: Complex<f64>) -> bool {
    z.re.is_finite() && z.im.is_finite()
}

/// `|S - T| / 2 = |1 - L| / (2 |1 + L|)`.
fn disk_value(z: Complex<f64>) -> f64 {
    let d = (Complex::new(1.0, 0.0) + z).norm_sqr();
    if d == 0.0 {
        f64::INFINITY
    } else {
        0.5 * ((Complex::new(1.0, 0.0) - z).norm_sqr() / d).sqrt()
    }
}

/// Margins of the loop whose frequency response is `l(w)` (negative-feedback convention,
/// closed loop stable), searched between `w_lo` and `w_hi` (rad/s, 0 < w_lo < w_hi).
pub fn frequency_margins<F: Fn(f64) -> Complex<f64>>(
    l: &F,
    w_lo: f64,
    w_hi: f64,
) -> FrequencyMargins {
    frequency_margins_with(l, w_lo, w_hi, &[], true)
}

/// As [`frequency_margins`], with extra frequencies (rad/s) where `|S - T|` may peak (the
/// closed-loop roots' frequencies); without `crossings` only the disk margin and the peak
/// gain are computed.
pub fn frequency_margins_with<F: Fn(f64) -> Complex<f64>>(
    l: &F,
    w_lo: f64,
    w_hi: f64,
    hints: &[f64],
    crossings: bool,
) -> FrequencyMargins {
    let mut out = FrequencyMargins::default();
    if !(w_lo > 0.0 && w_hi > w_lo && w_lo.is_finite() && w_hi.is_finite()) {
        return out;
    }
    let decades = (w_hi / w_lo).log10();
    let n = ((decades * POINTS_PER_DECADE as f64).ceil() as usize).max(2);
    let step = (w_hi / w_lo).powf(1.0 / n as f64);
    let mut gm_up: Option<(f64, f64)> = None;
    let mut gm_down: Option<f64> = None;
    let mut lag: Option<(f64, f64)> = None;
    let mut delay: Option<f64> = None;
    // Disk peak: (value, frequency); the rolled-off limit w -> infinity first.
    let mut disk: (f64, Option<f64>) = (0.0, None);
    let mut gain = |k: f64, w: f64| {
        if !(k > 0.0 && k.is_finite()) {
            return;
        }
        let db = 20.0 * k.log10();
        if db.abs() > MAX_GAIN_MARGIN_DB {
            return;
        }
        if db > 0.0 {
            if gm_up.is_none_or(|(x, _)| db < x) {
                gm_up = Some((db, w));
            }
        } else if db < 0.0 && gm_down.is_none_or(|x| db > x) {
            gm_down = Some(db);
        }
    };
    // w = 0: a real L(0) < 0 is a gain crossing.
    let z0 = l(0.0);
    if finite(z0) {
        if z0.im.abs() <= 1e-9 * z0.norm() && z0.re < 0.0 {
            gain(-1.0 / z0.re, 0.0);
        }
        disk = (disk_value(z0), Some(0.0));
    }
    let disk_at = |w: f64, z: Complex<f64>, disk: &mut (f64, Option<f64>)| {
        let d = disk_value(z);
        if d > disk.0 {
            *disk = (d, Some(w));
        }
    };
    let mut w0 = w_lo;
    let mut za = l(w0);
    let mut peak_gain2 = if finite(za) { za.norm_sqr() } else { 0.0 };
    if finite(za) {
        disk_at(w0, za, &mut disk);
    }
    for i in 1..=n {
        let w1 = if i == n { w_hi } else { w0 * step };
        let zb = l(w1);
        if !finite(zb) || !finite(za) {
            w0 = w1;
            za = zb;
            continue;
        }
        peak_gain2 = peak_gain2.max(zb.norm_sqr());
        disk_at(w1, zb, &mut disk);
        if !crossings {
            w0 = w1;
            za = zb;
            continue;
        }
        let (ga, gb) = (za.norm_sqr() - 1.0, zb.norm_sqr() - 1.0);
        if ga * gb <= 0.0 && ga != gb {
            let wc = refine(|w| l(w).norm_sqr() - 1.0, w0, w1);
            let zc = l(wc);
            if (zc.norm_sqr() - 1.0).abs() < 2e-6 {
                let phi = (zc.arg() + std::f64::consts::PI).rem_euclid(2.0 * std::f64::consts::PI);
                let phi_deg = phi.to_degrees();
                if lag.is_none_or(|(p, _)| phi_deg < p) {
                    lag = Some((phi_deg, wc));
                }
                let d = phi / wc;
                delay = Some(delay.map_or(d, |x: f64| x.min(d)));
            }
        }
        if za.im * zb.im <= 0.0 && za.im != zb.im {
            let wp = refine(|w| l(w).im, w0, w1);
            let zp = l(wp);
            if finite(zp) && zp.re < 0.0 && zp.im.abs() <= 1e-6 * zp.norm() {
                gain(-1.0 / zp.re, wp);
            }
        }
        w0 = w1;
        za = zb;
    }
    // A loop rolled off at the top of the search is taken to L -> 0 beyond it (|S - T|/2 -> 1/2).
    let top = l(w_hi);
    if finite(top) && top.norm_sqr() < 1e-4 && 0.5 >= disk.0 {
        disk = (0.5, None);
    }
    // Refine the disk peak around the largest sample and around every hint.
    let dv = |w: f64| {
        let z = l(w);
        if finite(z) {
            disk_value(z)
        } else {
            0.0
        }
    };
    let mut centres: Vec<f64> = Vec::new();
    if let Some(w) = disk.1.filter(|&w| w > 0.0) {
        centres.push(w);
    }
    let mut best = disk;
    for &w in centres.iter().chain(hints.iter()) {
        if !(w > w_lo && w < w_hi) || dv(w) < 0.5 * best.0 {
            continue;
        }
        let (wp, vp) = peak(dv, (w / step).max(w_lo), (w * step).min(w_hi));
        if vp > best.0 {
            best = (vp, Some(wp));
        }
    }
    out.gain_margin_db = gm_up.map(|g| g.0);
    out.phase_crossover_rad_s = gm_up.map(|g| g.1);
    out.gain_reduction_margin_db = gm_down;
    out.phase_margin_deg = lag.map(|p| p.0);
    out.crossover_rad_s = lag.map(|p| p.1);
    out.delay_margin_s = delay;
    out.disk_margin = (best.0 > 0.0).then(|| 1.0 / best.0);
    out.disk_frequency_rad_s = best.1;
    out.peak_gain = peak_gain2.sqrt();
    out
}

/// A single-input single-output state-space system `y = c (sI - a)^-1 b + d`.
#[derive(Debug, Clone, PartialEq)]
pub struct Siso {
    /// State matrix (n x n).
    pub a: DMatrix<f64>,
    /// Input column (n).
    pub b: DVector<f64>,
    /// Output row (n).
    pub c: DVector<f64>,
    /// Feedthrough.
    pub d: f64,
}

impl Siso {
    /// Frequency response at `w_rad_s`, by a dense complex LU solve (the reference evaluation).
    pub fn response(&self, w_rad_s: f64) -> Complex<f64> {
        let n = self.a.nrows();
        let m = DMatrix::from_fn(n, n, |i, j| {
            Complex::new(-self.a[(i, j)], if i == j { w_rad_s } else { 0.0 })
        });
        let rhs = DVector::from_fn(n, |i, _| Complex::new(self.b[i], 0.0));
        match m.lu().solve(&rhs) {
            Some(x) => (0..n).map(|i| x[i] * self.c[i]).sum::<Complex<f64>>() + self.d,
            None => Complex::new(f64::INFINITY, 0.0),
        }
    }

    /// Margins of this system taken as a loop transfer (negative-feedback convention).
    pub fn margins(&self) -> FrequencyMargins {
        frequency_margins(&|w| self.response(w), OMEGA_MIN_RAD_S, OMEGA_MAX_RAD_S)
    }
}

/// One factor of a characteristic polynomial on the imaginary axis: a quadratic
/// `s^2 - p s + q` (a complex pair, `p = 2 Re`, `q = |root|^2`, or two real roots, `p` their
/// sum and `q` their product), `(q - w^2) - j p w`, or a single real root `r`, `jw - r`.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Factor {
    quadratic: bool,
    p: f64,
    q: f64,
}

impl Factor {
    fn at(&self, w: f64) -> Complex<f64> {
        if self.quadratic {
            Complex::new(self.q - w * w, -self.p * w)
        } else {
            Complex::new(-self.p, w)
        }
    }
}

/// Characteristic polynomial of a matrix as root factors, each complex pair once.
#[derive(Debug, Clone, PartialEq)]
pub struct Roots {
    factors: Vec<Factor>,
    /// The eigenvalues, each complex pair once (imag > 0).
    pub values: Vec<Complex<f64>>,
}

impl Roots {
    /// The eigenvalues of `a` as factors.
    pub fn of(a: &DMatrix<f64>) -> Roots {
        // A non-finite or non-converging matrix gives NaN roots, which no stability test passes.
        let ev = crate::linear::try_complex_eigenvalues(a)
            .unwrap_or_else(|_| vec![Complex::new(f64::NAN, 0.0); a.nrows()]);
        let scale = ev.iter().map(|z| z.norm()).fold(1.0, f64::max);
        let tol = 1e-12 * scale;
        let mut factors = Vec::with_capacity(ev.len());
        let mut values = Vec::with_capacity(ev.len());
        let mut single: Option<f64> = None;
        for z in ev.iter() {
            if z.im > tol {
                factors.push(Factor {
                    quadratic: true,
                    p: 2.0 * z.re,
                    q: z.norm_sqr(),
                });
                values.push(*z);
            } else if z.im >= -tol {
                values.push(Complex::new(z.re, 0.0));
                match single.take() {
                    Some(r) => factors.push(Factor {
                        quadratic: true,
                        p: r + z.re,
                        q: r * z.re,
                    }),
                    None => single = Some(z.re),
                }
            }
        }
        if let Some(r) = single {
            factors.push(Factor {
                quadratic: false,
                p: r,
                q: 0.0,
            });
        }
        Roots { factors, values }
    }

    /// Whether every root has a real part below `-1e-9` 1/s.
    pub fn stable(&self) -> bool {
        self.values.iter().all(|z| z.re < -1e-9)
    }

    fn at(&self, w: f64) -> Complex<f64> {
        let mut p = Complex::new(1.0, 0.0);
        for f in &self.factors {
            p *= f.at(w);
        }
        p
    }
}

/// The loop broken at one actuator in pole form: `L(jw) = chi_cl(jw) / chi_j(jw) - 1`.
#[derive(Debug, Clone, PartialEq)]
pub struct PoleRatio<'a> {
    /// Roots of the whole closed loop.
    pub closed: &'a Roots,
    /// Roots of the loop with actuator `j` broken.
    pub open: Roots,
}

impl PoleRatio<'_> {
    /// Frequency response at `w_rad_s` (no allocation).
    pub fn response(&self, w_rad_s: f64) -> Complex<f64> {
        self.closed.at(w_rad_s) / self.open.at(w_rad_s) - 1.0
    }
}

/// The closed loop of the law around a trim point, with every actuator's input exposed.
#[derive(Debug, Clone, PartialEq)]
pub struct ClosedLoop {
    /// Open-loop matrix (plant, height, integrators, actuators, delays), no law at the breaks.
    pub a_open: DMatrix<f64>,
    /// Input column of each actuator (thrust commands, then elevators).
    pub b: Vec<DVector<f64>>,
    /// The (delayed) law's command to each actuator as a row over the states.
    pub c: Vec<DVector<f64>>,
    /// Actuator names.
    pub actuators: Vec<String>,
    /// Loops that drive each actuator.
    pub loop_names: Vec<String>,
}

impl ClosedLoop {
    /// Closed-loop matrix with the law's command to actuator `j` scaled by `gains[j]`.
    pub fn a_closed(&self, gains: &[f64]) -> DMatrix<f64> {
        let mut a = self.a_open.clone();
        for (j, (b, c)) in self.b.iter().zip(&self.c).enumerate() {
            a += gains.get(j).copied().unwrap_or(1.0) * b * c.transpose();
        }
        a
    }

    /// The loop broken at actuator `j`, in the negative-feedback convention.
    pub fn broken(&self, j: usize) -> Siso {
        let mut g = vec![1.0; self.b.len()];
        g[j] = 0.0;
        Siso {
            a: self.a_closed(&g),
            b: self.b[j].clone(),
            c: -self.c[j].clone(),
            d: 0.0,
        }
    }

    /// Whether every eigenvalue of the closed loop has a negative real part.
    pub fn stable(&self) -> bool {
        Roots::of(&self.a_closed(&vec![1.0; self.b.len()])).stable()
    }

    /// Margins at every actuator: (closed loop stable, margins per actuator); without
    /// `crossings` only the disk margins and peak gains; with `only`, only the actuators it
    /// marks.
    pub fn margins(&self, crossings: bool, only: Option<&[bool]>) -> (bool, Vec<FrequencyMargins>) {
        let m = self.b.len();
        let closed = Roots::of(&self.a_closed(&vec![1.0; m]));
        let stable = closed.stable();
        let mut out = vec![FrequencyMargins::default(); m];
        if !stable {
            return (false, out);
        }
        // Lightly damped closed-loop roots make sharp peaks of |S - T| the grid may miss.
        let hints: Vec<f64> = closed
            .values
            .iter()
            .filter(|z| z.im > 0.0 && -z.re < 0.5 * z.norm())
            .map(|z| z.im)
            .collect();
        let mut g = vec![1.0; m];
        for (j, o) in out.iter_mut().enumerate() {
            if self.c[j].norm() * self.b[j].norm() <= 1e-12
                || only.is_some_and(|o| !o.get(j).copied().unwrap_or(true))
            {
                continue;
            }
            g[j] = 0.0;
            let pr = PoleRatio {
                closed: &closed,
                open: Roots::of(&self.a_closed(&g)),
            };
            g[j] = 1.0;
            *o = frequency_margins_with(
                &|w| pr.response(w),
                OMEGA_MIN_RAD_S,
                OMEGA_MAX_RAD_S,
                &hints,
                crossings,
            );
        }
        (true, out)
    }
}

/// Assemble the closed loop of the law (`gains`) around the trim point (`state`, `controls`,
/// `lin`) with the loop model `ls`. States: u, w, q, theta, h, speed integral, height
/// integral, thrust of each group, each elevator servo, each command delay.
pub fn closed_loop(
    v: &Vehicle,
    state: &State,
    controls: &Controls,
    lin: &LinearModel,
    gains: &FeedbackGains,
    climb_rad: f64,
    ls: &LoopSettings,
) -> ClosedLoop {
    let nt = v.rotors.len();
    // The law handles at most MAX_INPUTS inputs; further ones are left out of the analysis.
    let m = feedback_inputs(v).min(super::law::MAX_INPUTS);
    let ne = m.saturating_sub(nt);
    // Values outside the validated range leave the element out rather than poison the model.
    let servo = ls.elevator_bandwidth_rad_s > 0.0 && ls.elevator_bandwidth_rad_s.is_finite();
    let delayed = ls.delay_s > 0.0 && ls.delay_s.is_finite();
    let i_servo = 7 + nt;
    let i_delay = i_servo + if servo { ne } else { 0 };
    let n = i_delay + if delayed { m } else { 0 };
    let f = ls.effectiveness;
    let (st, ct) = state.theta_rad.sin_cos();
    let (u0, w0) = (state.u_mps, state.w_mps);
    let cg = climb_rad.cos().max(0.1);
    let mut a = DMatrix::zeros(n, n);
    for i in 0..4 {
        for k in 0..4 {
            a[(i, k)] = lin.a[(i, k)];
        }
    }
    // Thrust lags and elevator servos feed the plant.
    for g in 0..nt.min(m) {
        let col = lin.b.get(g).copied().unwrap_or([0.0; 4]);
        for i in 0..4 {
            a[(i, 7 + g)] = f * col[i];
        }
        let tau = v.rotors[g].thrust_lag_s.max(super::MIN_THRUST_LAG_S);
        a[(7 + g, 7 + g)] = -1.0 / tau;
    }
    if servo {
        for k in 0..ne {
            let col = lin.b.get(nt + k).copied().unwrap_or([0.0; 4]);
            for i in 0..4 {
                a[(i, i_servo + k)] = f * col[i];
            }
            a[(i_servo + k, i_servo + k)] = -ls.elevator_bandwidth_rad_s;
        }
    }
    // Height rate and the path speed (still air).
    let hdot = [st, -ct, 0.0, u0 * ct + w0 * st];
    let vpath = [ct / cg, st / cg, 0.0, (-u0 * st + w0 * ct) / cg];
    for k in 0..4 {
        a[(4, k)] = hdot[k];
        a[(5, k)] = -vpath[k];
    }
    a[(6, 4)] = -1.0;
    // Law inputs as rows over the states.
    let row = |fill: &dyn Fn(&mut DVector<f64>)| {
        let mut r = DVector::zeros(n);
        fill(&mut r);
        r
    };
    let speed_error = row(&|r| (0..4).for_each(|k| r[k] = -vpath[k]));
    let speed_integral = row(&|r| r[5] = 1.0);
    let height_error = row(&|r| r[4] = -1.0);
    let height_rate_error = row(&|r| (0..4).for_each(|k| r[k] = -hdot[k]));
    let height_integral = row(&|r| r[6] = 1.0);
    let pitch = row(&|r| r[3] = 1.0);
    let pitch_rate = row(&|r| r[2] = 1.0);
    let own = row(&|r| (0..4).for_each(|k| r[k] = lin.a[(2, k)]));
    let al = allocation(v, state, controls, lin);
    let unit = |set: &dyn Fn(&mut LawInput)| {
        let mut i = LawInput::default();
        set(&mut i);
        law(gains, &al, &i, None).delta
    };
    let k_speed = unit(&|i| i.speed_error_mps = 1.0);
    let k_speed_i = unit(&|i| i.speed_integral_m = 1.0);
    let k_height = unit(&|i| i.height_error_m = 1.0);
    let k_height_rate = unit(&|i| i.height_rate_error_mps = 1.0);
    let k_height_i = unit(&|i| i.height_integral_m_s = 1.0);
    let k_pitch = unit(&|i| i.pitch_rad = 1.0);
    let k_rate = unit(&|i| i.pitch_rate_rad_s = 1.0);
    let k_own = unit(&|i| i.pitch_accel_own_rad_s2 = 1.0);
    let mut b = Vec::with_capacity(m);
    let mut c = Vec::with_capacity(m);
    let mut names = Vec::with_capacity(m);
    let mut loops = Vec::with_capacity(m);
    for j in 0..m {
        let mut bj = DVector::zeros(n);
        if j < nt {
            bj[7 + j] = -a[(7 + j, 7 + j)];
            names.push(format!("thrust {}", v.rotors[j].name));
        } else {
            if servo {
                bj[i_servo + j - nt] = ls.elevator_bandwidth_rad_s;
            } else {
                let col = lin.b.get(j).copied().unwrap_or([0.0; 4]);
                for i in 0..4 {
                    bj[i] = f * col[i];
                }
            }
            names.push(format!("elevator {}", v.elevators[j - nt].name));
        }
        let law_row = &speed_error * k_speed[j]
            + &speed_integral * k_speed_i[j]
            + &height_error * k_height[j]
            + &height_rate_error * k_height_rate[j]
            + &height_integral * k_height_i[j]
            + &pitch * k_pitch[j]
            + &pitch_rate * k_rate[j]
            + &own * k_own[j];
        // The delay: z' = (2/T)(u - z), command -u + 2 z (first-order Pade).
        let cj = if delayed {
            let p = 2.0 / ls.delay_s;
            let iz = i_delay + j;
            for k in 0..n {
                a[(iz, k)] += p * law_row[k];
            }
            a[(iz, iz)] -= p;
            let mut r = -law_row;
            r[iz] += 2.0;
            r
        } else {
            law_row
        };
        // Which loops drive it: response to 1 m/s, 1 m and 1 deg errors, relative.
        let contrib = [
            ("speed", k_speed[j].abs()),
            ("height", k_height[j].abs()),
            ("pitch attitude", k_pitch[j].abs() * 1f64.to_radians()),
        ];
        let big = contrib.iter().map(|x| x.1).fold(0.0, f64::max);
        let list: Vec<&str> = contrib
            .iter()
            .filter(|x| big > 0.0 && x.1 >= 0.2 * big)
            .map(|x| x.0)
            .collect();
        loops.push(list.join(", "));
        b.push(bj);
        c.push(cj);
    }
    ClosedLoop {
        a_open: a,
        b,
        c,
        actuators: names,
        loop_names: loops,
    }
}

/// Loop margins at every actuator of the law at a trim point, in the order thrust groups then
/// elevators, with the loop model `ls` and the plant-mismatch cases of
/// [`MISMATCH_EFFECTIVENESS`]. `climb_rad` is the trim's flight-path angle (the speed loop
/// holds the speed along it).
pub fn loop_margins(
    v: &Vehicle,
    state: &State,
    controls: &Controls,
    lin: &LinearModel,
    gains: &FeedbackGains,
    climb_rad: f64,
    ls: &LoopSettings,
) -> Vec<LoopMargin> {
    let cl = closed_loop(v, state, controls, lin, gains, climb_rad, ls);
    let (stable, fm) = cl.margins(true, None);
    let in_loop: Vec<bool> = (0..cl.b.len())
        .map(|j| {
            if stable {
                fm[j].peak_gain >= IN_LOOP_GAIN
            } else {
                cl.c[j].norm() * cl.b[j].norm() > 1e-12
            }
        })
        .collect();
    let mut worst: Vec<(Option<f64>, f64)> = fm
        .iter()
        .map(|m| (if stable { m.disk_margin } else { Some(0.0) }, 1.0))
        .collect();
    let mut mismatch_stable = true;
    for &e in &MISMATCH_EFFECTIVENESS {
        let case = LoopSettings {
            effectiveness: e * ls.effectiveness,
            ..*ls
        };
        let (ok, mm) = closed_loop(v, state, controls, lin, gains, climb_rad, &case)
            .margins(false, Some(&in_loop));
        mismatch_stable &= ok;
        for (j, w) in worst.iter_mut().enumerate() {
            let d = if ok { mm[j].disk_margin } else { Some(0.0) };
            if let Some(d) = d {
                if w.0.is_none_or(|x| d < x) {
                    *w = (Some(d), e);
                }
            }
        }
    }
    (0..cl.b.len())
        .map(|j| {
            let on = in_loop[j] && stable;
            let m = if on {
                fm[j]
            } else {
                FrequencyMargins::default()
            };
            LoopMargin {
                loop_name: if in_loop[j] {
                    cl.loop_names[j].clone()
                } else {
                    String::new()
                },
                actuator: cl.actuators[j].clone(),
                in_loop: in_loop[j],
                gain_margin_db: m.gain_margin_db,
                gain_reduction_margin_db: m.gain_reduction_margin_db,
                phase_margin_deg: m.phase_margin_deg,
                delay_margin_s: m.delay_margin_s,
                crossover_rad_s: m.crossover_rad_s,
                phase_crossover_rad_s: m.phase_crossover_rad_s,
                disk_margin: m.disk_margin,
                disk_gain_margin_db: m.disk_gain_margin_db(),
                disk_phase_margin_deg: m.disk_phase_margin_deg(),
                disk_frequency_rad_s: m.disk_frequency_rad_s,
                closed_loop_stable: stable,
                worst_disk_margin: if in_loop[j] { worst[j].0 } else { None },
                worst_effectiveness: worst[j].1,
                mismatch_stable,
            }
        })
        .collect()
}

/// Reasons a point's loops fall short (the verdict): an unstable closed loop, nominal or in a
/// mismatch case, and a symmetric disk margin below `disk_margin` at any actuator in the loop.
pub fn margin_shortfalls(m: &[LoopMargin], disk_margin: f64) -> Vec<String> {
    let mut out = Vec::new();
    if m.iter().any(|x| !x.closed_loop_stable) {
        out.push("closed loop unstable".to_string());
        return out;
    }
    if let Some(x) = m.iter().find(|x| x.worst_disk_margin == Some(0.0)) {
        out.push(format!(
            "closed loop unstable with control effectiveness x{}",
            x.worst_effectiveness
        ));
    }
    for x in m.iter().filter(|x| x.in_loop) {
        if let Some(a) = x.disk_margin {
            if a < disk_margin {
                out.push(format!(
                    "disk margin at {} {a:.2} (+-{} dB, +-{:.0} deg; threshold {disk_margin:.2})",
                    x.actuator,
                    disk_gain_db(a).map_or("inf".into(), |g| format!("{g:.1}")),
                    disk_phase_deg(a),
                ));
            }
        }
    }
    out
}
