//! Linear models at trim points and their modes.
//!
//! A (4x4, states u, w, q, theta) and B (4 x inputs) come from central differences of the
//! nonlinear derivative function [`crate::dynamics::evaluate`]. The steps are relative to a
//! scale of each variable (1e-4 of max(V, 1 m/s) for velocities, 1e-5 rad for angles and
//! rates, 1e-4 of the range for controls); truncation error is O(h^2) and round-off
//! O(eps/h), so these steps leave both near 1e-8 relative, and the tests check that halving
//! them changes nothing that matters.
//!
//! Eigenvalues come from nalgebra's Schur decomposition; eigenvectors are the null vectors
//! of (A - lambda I) from a complex SVD. Modes follow the textbook definitions (Etkin and
//! Reid, Dynamics of Flight; Nelson, Flight Stability and Automatic Control): natural
//! frequency |lambda|, damping ratio -Re/|lambda|, period 2 pi / Im, time to half or double
//! amplitude ln 2 / |Re|.

use nalgebra::{Complex, Matrix4, SMatrix};

use crate::atmosphere::Atmosphere;
use crate::dynamics::{evaluate, Controls, Evaluation, State, Wind};
use crate::vehicle::Vehicle;

/// A linear model dx/dt = A x + B u about a trim point.
#[derive(Debug, Clone, PartialEq)]
pub struct LinearModel {
    /// State matrix, rows/columns u, w, q, theta (SI).
    pub a: Matrix4<f64>,
    /// Input matrix, 4 rows, one column per input in [`Controls::to_flat`] order.
    pub b: Vec<[f64; 4]>,
}

impl LinearModel {
    /// A as nested rows.
    pub fn a_rows(&self) -> Vec<Vec<f64>> {
        (0..4)
            .map(|i| (0..4).map(|j| self.a[(i, j)]).collect())
            .collect()
    }
    /// B as nested rows (4 x inputs).
    pub fn b_rows(&self) -> Vec<Vec<f64>> {
        (0..4)
            .map(|i| self.b.iter().map(|c| c[i]).collect())
            .collect()
    }
    /// The model back from [`LinearModel::a_rows`] and [`LinearModel::b_rows`]; None when
    /// the shapes are not 4 x 4 and 4 x inputs.
    pub fn from_rows(a: &[Vec<f64>], b: &[Vec<f64>]) -> Option<LinearModel> {
        if a.len() != 4 || b.len() != 4 || a.iter().any(|r| r.len() != 4) {
            return None;
        }
        let n = b[0].len();
        if b.iter().any(|r| r.len() != n) {
            return None;
        }
        Some(LinearModel {
            a: Matrix4::from_fn(|i, j| a[i][j]),
            b: (0..n)
                .map(|k| [b[0][k], b[1][k], b[2][k], b[3][k]])
                .collect(),
        })
    }
}

/// Relative step factors for [`linearise_with_steps`].
#[derive(Debug, Clone, Copy)]
pub struct Steps {
    /// Velocity step as a fraction of max(V, 1 m/s).
    pub velocity: f64,
    /// Angle and rate step (rad, rad/s).
    pub angle: f64,
    /// Control step as a fraction of the control's range.
    pub control: f64,
}

impl Default for Steps {
    fn default() -> Self {
        Steps {
            velocity: 1e-4,
            angle: 1e-5,
            control: 1e-4,
        }
    }
}

fn control_range(v: &Vehicle, i: usize) -> f64 {
    let nt = v.rotors.len();
    let ne = v.elevators.len();
    if i < nt {
        v.rotors[i].thrust_max_n
    } else if i < nt + ne {
        let e = &v.elevators[i - nt];
        (e.max_rad - e.min_rad).max(1e-3)
    } else {
        let a = &v.actuators[i - nt - ne];
        (a.max_rad - a.min_rad).max(1e-3)
    }
}

/// Linearise about (state, controls) with the default steps.
pub fn linearise(v: &Vehicle, atm: &Atmosphere, state: &State, controls: &Controls) -> LinearModel {
    linearise_with_steps(v, atm, state, controls, Steps::default())
}

/// Linearise about (state, controls) by central differences with the given steps.
pub fn linearise_with_steps(
    v: &Vehicle,
    atm: &Atmosphere,
    state: &State,
    controls: &Controls,
    steps: Steps,
) -> LinearModel {
    let mut ev = Evaluation::default();
    let speed = state.u_mps.hypot(state.w_mps).max(1.0);
    let x0 = state.to_array();
    let mut a = Matrix4::zeros();
    for j in 0..4 {
        let h = if j < 2 {
            steps.velocity * speed
        } else {
            steps.angle
        };
        let mut xp = x0;
        xp[j] += h;
        evaluate(
            v,
            atm,
            &State::from_array(xp),
            controls,
            Wind::default(),
            &mut ev,
        );
        let fp = ev.state_dot;
        let mut xm = x0;
        xm[j] -= h;
        evaluate(
            v,
            atm,
            &State::from_array(xm),
            controls,
            Wind::default(),
            &mut ev,
        );
        let fm = ev.state_dot;
        for i in 0..4 {
            a[(i, j)] = (fp[i] - fm[i]) / (2.0 * h);
        }
    }
    let mut b = Vec::with_capacity(controls.len());
    let mut c = controls.clone();
    for k in 0..controls.len() {
        let h = steps.control * control_range(v, k);
        let base = controls.flat(k);
        *c.flat_mut(k) = base + h;
        evaluate(v, atm, state, &c, Wind::default(), &mut ev);
        let fp = ev.state_dot;
        *c.flat_mut(k) = base - h;
        evaluate(v, atm, state, &c, Wind::default(), &mut ev);
        let fm = ev.state_dot;
        *c.flat_mut(k) = base;
        let mut col = [0.0; 4];
        for (i, x) in col.iter_mut().enumerate() {
            *x = (fp[i] - fm[i]) / (2.0 * h);
        }
        b.push(col);
    }
    LinearModel { a, b }
}

/// One mode of motion (a real root, or a complex-conjugate pair counted once).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Mode {
    /// What the mode is or does (short-period, phugoid, heave subsidence, ...).
    pub name: String,
    /// Real part (1/s).
    pub real_per_s: f64,
    /// Imaginary part, >= 0 (rad/s).
    pub imag_rad_s: f64,
    /// |lambda| (rad/s).
    pub natural_freq_rad_s: f64,
    /// -Re/|lambda| (-); 1 for a stable real root, -1 for an unstable one.
    pub damping_ratio: f64,
    /// 2 pi / Im for oscillatory modes (s).
    pub period_s: Option<f64>,
    /// ln 2 / Re for unstable modes (s).
    pub time_to_double_s: Option<f64>,
    /// ln 2 / |Re| for stable modes (s).
    pub time_to_half_s: Option<f64>,
    /// Eigenvector magnitudes in u, w, q, theta, scaled so the largest of
    /// (|u|/V, |w|/V, |q| s, |theta|) is 1 (V = max(speed, 1 m/s)).
    pub shape: [f64; 4],
    /// MIL-F-8785C level indicated for wingborne modes (Category B), never a verdict: 1 to
    /// 3, or 4 for worse than level 3 (the specification defines levels 1 to 3 only;
    /// [`level_label`] gives the words).
    pub level_8785c: Option<u8>,
}

/// Iteration budget of the Schur decomposition: the shifted QR iteration converges in a few
/// iterations per eigenvalue on any finite matrix of our sizes, so the budget is only reached
/// by a matrix it cannot handle (common practice, no source).
pub const SCHUR_MAX_ITERATIONS: usize = 10_000;

/// Why eigenvalues could not be computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum EigenError {
    /// An entry of the matrix is infinite or NaN.
    #[error("the linear model has a non-finite entry")]
    NonFinite,
    /// The Schur decomposition did not converge within [`SCHUR_MAX_ITERATIONS`].
    #[error("the eigenvalue iteration did not converge within {SCHUR_MAX_ITERATIONS} iterations")]
    NoConvergence,
}

/// Eigenvalues of a square matrix by the Schur decomposition, with a non-finite guard and an
/// iteration budget (never loops forever).
pub fn try_complex_eigenvalues(
    a: &nalgebra::DMatrix<f64>,
) -> Result<Vec<Complex<f64>>, EigenError> {
    if a.iter().any(|x| !x.is_finite()) {
        return Err(EigenError::NonFinite);
    }
    let schur = nalgebra::linalg::Schur::try_new(a.clone(), f64::EPSILON, SCHUR_MAX_ITERATIONS)
        .ok_or(EigenError::NoConvergence)?;
    let ev: Vec<Complex<f64>> = schur.complex_eigenvalues().iter().copied().collect();
    if ev.iter().any(|l| !(l.re.is_finite() && l.im.is_finite())) {
        return Err(EigenError::NonFinite);
    }
    Ok(ev)
}

/// Eigenvalues of A, each complex pair once (imag >= 0), sorted by frequency.
pub fn try_eigenvalues(a: &Matrix4<f64>) -> Result<Vec<Complex<f64>>, EigenError> {
    let d = nalgebra::DMatrix::from_fn(4, 4, |i, j| a[(i, j)]);
    let ev = try_complex_eigenvalues(&d)?;
    let mut out: Vec<Complex<f64>> = Vec::new();
    for l in ev.iter() {
        if l.im < -1e-12 {
            continue;
        }
        out.push(*l);
    }
    out.sort_by(|x, y| {
        x.norm()
            .partial_cmp(&y.norm())
            .unwrap_or(std::cmp::Ordering::Equal)
    });
    Ok(out)
}

/// Eigenvalues of A as [`try_eigenvalues`], empty when they cannot be computed (a non-finite
/// model; [`crate::sweep::assess`] reports that case as a reason).
pub fn eigenvalues(a: &Matrix4<f64>) -> Vec<Complex<f64>> {
    try_eigenvalues(a).unwrap_or_default()
}

impl LinearModel {
    /// Whether every entry of A and B is finite.
    pub fn is_finite(&self) -> bool {
        self.a.iter().all(|x| x.is_finite()) && self.b.iter().flatten().all(|x| x.is_finite())
    }
}

/// Unit eigenvector of A for eigenvalue `lambda`, from the complex SVD of (A - lambda I);
/// zero when the SVD fails (non-finite input or iteration budget spent).
pub fn eigenvector(a: &Matrix4<f64>, lambda: Complex<f64>) -> [Complex<f64>; 4] {
    let m: SMatrix<Complex<f64>, 4, 4> = SMatrix::from_fn(|i, j| {
        Complex::new(a[(i, j)], 0.0)
            - if i == j {
                lambda
            } else {
                Complex::new(0.0, 0.0)
            }
    });
    let mut v = [Complex::new(0.0, 0.0); 4];
    // Budgeted: a matrix the SVD cannot handle gives the zero vector instead of a hang.
    let finite = m.iter().all(|x| x.re.is_finite() && x.im.is_finite());
    let Some(svd) = finite
        .then(|| m.try_svd(false, true, f64::EPSILON, SCHUR_MAX_ITERATIONS))
        .flatten()
    else {
        return v;
    };
    if let Some(vt) = svd.v_t {
        // Smallest singular value's row of V^H.
        let k = (0..4)
            .min_by(|&x, &y| {
                svd.singular_values[x]
                    .partial_cmp(&svd.singular_values[y])
                    .unwrap_or(std::cmp::Ordering::Equal)
            })
            .unwrap_or(3);
        for (j, x) in v.iter_mut().enumerate() {
            *x = vt[(k, j)].conj();
        }
    }
    v
}

fn mode_numbers(l: Complex<f64>) -> (f64, f64, Option<f64>, Option<f64>, Option<f64>) {
    let wn = l.norm();
    let zeta = if wn > 1e-12 { -l.re / wn } else { 0.0 };
    let period = (l.im > 1e-9).then(|| 2.0 * std::f64::consts::PI / l.im);
    let ln2 = std::f64::consts::LN_2;
    let t2 = (l.re > 1e-12).then(|| ln2 / l.re);
    let th = (l.re < -1e-12).then(|| ln2 / -l.re);
    (wn, zeta, period, t2, th)
}

/// MIL-F-8785C phugoid level from damping ratio and time to double.
/// Source: MIL-F-8785C (1980) §3.2.1.2 (numbers from memory, as restated in CHECK-VALUES §7).
pub fn phugoid_level(damping_ratio: f64, time_to_double_s: Option<f64>) -> u8 {
    if damping_ratio >= 0.04 {
        1
    } else if damping_ratio >= 0.0 {
        2
    } else if time_to_double_s.is_some_and(|t| t >= 55.0) {
        3
    } else {
        4
    }
}

/// MIL-F-8785C short-period damping level, Category B (gradual, non-terminal flight).
/// Source: MIL-F-8785C (1980) §3.2.2.1.2 (numbers from memory). Returns 4 for worse than Level 3.
pub fn short_period_level_b(damping_ratio: f64) -> u8 {
    if (0.30..=2.0).contains(&damping_ratio) {
        1
    } else if (0.20..=2.0).contains(&damping_ratio) {
        2
    } else if damping_ratio >= 0.15 {
        3
    } else {
        4
    }
}

/// Modes of A, named. `wingborne` selects the textbook names short-period and phugoid for
/// the oscillatory pairs; otherwise modes are named by what they move.
pub fn modes(a: &Matrix4<f64>, speed_mps: f64, wingborne: bool) -> Vec<Mode> {
    let vs = speed_mps.max(1.0);
    let roots = eigenvalues(a);
    let mut out: Vec<Mode> = roots
        .iter()
        .map(|&l| {
            let e = eigenvector(a, l);
            let raw = [e[0].norm() / vs, e[1].norm() / vs, e[2].norm(), e[3].norm()];
            let big = raw.iter().cloned().fold(0.0, f64::max).max(1e-300);
            let shape = [raw[0] / big, raw[1] / big, raw[2] / big, raw[3] / big];
            let (wn, zeta, period, t2, th) = mode_numbers(l);
            Mode {
                name: describe(l, &shape),
                real_per_s: l.re,
                imag_rad_s: l.im.max(0.0),
                natural_freq_rad_s: wn,
                damping_ratio: zeta,
                period_s: period,
                time_to_double_s: t2,
                time_to_half_s: th,
                shape,
                level_8785c: None,
            }
        })
        .collect();
    if wingborne {
        name_wingborne_modes(&mut out);
    }
    out
}

/// Frequency ratio between the short-period and the phugoid below which the two are not
/// told apart by frequency (common practice, no source: textbook aircraft separate them by
/// an order of magnitude; 3 is a lenient floor).
const MODE_SEPARATION: f64 = 3.0;

/// Name the oscillatory pairs of a wingborne point as the textbooks do, only where their
/// frequencies separate and their shapes agree: the slow, speed-dominated pair is the phugoid,
/// the fast, pitch- or heave-dominated pair the short period (Etkin and Reid, Dynamics of
/// Flight, ch. 6; Nelson, Flight Stability and Automatic Control, ch. 4). Anything else keeps
/// the name of what it moves.
fn name_wingborne_modes(out: &mut [Mode]) {
    let mut osc: Vec<usize> = (0..out.len())
        .filter(|&i| out[i].imag_rad_s > 1e-9)
        .collect();
    osc.sort_by(|&a, &b| {
        out[a]
            .natural_freq_rad_s
            .total_cmp(&out[b].natural_freq_rad_s)
    });
    let speed_dominated = |m: &Mode| m.shape[0] >= 0.5 * m.shape[1].max(m.shape[2]);
    let pitch_dominated = |m: &Mode| m.shape[1].max(m.shape[2]) >= m.shape[0];
    let (slow, fast) = match osc.len() {
        2 if out[osc[1]].natural_freq_rad_s >= MODE_SEPARATION * out[osc[0]].natural_freq_rad_s => {
            (Some(osc[0]), Some(osc[1]))
        }
        1 => {
            let m = &out[osc[0]];
            if speed_dominated(m) && m.natural_freq_rad_s < 1.0 {
                (Some(osc[0]), None)
            } else if pitch_dominated(m) && m.natural_freq_rad_s >= 1.0 {
                (None, Some(osc[0]))
            } else {
                (None, None)
            }
        }
        _ => (None, None),
    };
    if let Some(i) = slow.filter(|&i| speed_dominated(&out[i])) {
        out[i].name = "phugoid".into();
        out[i].level_8785c = Some(phugoid_level(out[i].damping_ratio, out[i].time_to_double_s));
    }
    if let Some(i) = fast.filter(|&i| pitch_dominated(&out[i])) {
        out[i].name = "short-period".into();
        out[i].level_8785c = Some(short_period_level_b(out[i].damping_ratio));
    }
}

/// Words for a MIL-F-8785C level as returned by [`phugoid_level`] and
/// [`short_period_level_b`]: "level 1" to "level 3", or "worse than level 3" (4).
pub fn level_label(level: u8) -> &'static str {
    match level {
        1 => "level 1",
        2 => "level 2",
        3 => "level 3",
        _ => "worse than level 3",
    }
}

fn describe(l: Complex<f64>, shape: &[f64; 4]) -> String {
    let [u, w, q, th] = *shape;
    let pitch = q.max(th);
    if l.im > 1e-9 {
        let what = if u > 0.5 * pitch && pitch > 0.2 * u {
            "pitch-surge"
        } else if w > u.max(pitch) {
            "heave"
        } else if u >= pitch {
            "surge"
        } else {
            "pitch"
        };
        let how = if l.re > 0.0 {
            "divergent oscillation"
        } else {
            "oscillation"
        };
        format!("{what} {how}")
    } else {
        if l.norm() < 1e-6 {
            return "neutral".into();
        }
        let what = if w >= u.max(pitch) {
            "heave"
        } else if u >= pitch {
            "surge"
        } else {
            "pitch"
        };
        let how = if l.re > 0.0 {
            "divergence"
        } else {
            "subsidence"
        };
        format!("{what} {how}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn eigenvector_solves_the_eigenproblem() {
        let a = Matrix4::new(
            -0.045, 0.036, 0.0, -9.81, -0.369, -2.02, 53.6, 0.0, 0.0019, -0.05, -2.98, 0.0, 0.0,
            0.0, 1.0, 0.0,
        );
        for l in eigenvalues(&a) {
            let v = eigenvector(&a, l);
            for i in 0..4 {
                let mut s = Complex::new(0.0, 0.0);
                for j in 0..4 {
                    s += Complex::new(a[(i, j)], 0.0) * v[j];
                }
                assert!((s - l * v[i]).norm() < 1e-9);
            }
        }
    }

    #[test]
    fn non_finite_models_return_an_error_instead_of_looping() {
        // Common practice, no source: a NaN or infinite entry has no eigenvalues.
        let mut a = Matrix4::identity();
        a[(1, 2)] = f64::NAN;
        assert_eq!(try_eigenvalues(&a), Err(EigenError::NonFinite));
        a[(1, 2)] = f64::INFINITY;
        assert_eq!(try_eigenvalues(&a), Err(EigenError::NonFinite));
        assert!(modes(&a, 10.0, true).is_empty());
    }

    #[test]
    fn mode_numbers_follow_the_definitions() {
        let (wn, z, p, t2, th) = mode_numbers(Complex::new(-0.5, 2.0));
        assert!((wn - 4.25f64.sqrt()).abs() < 1e-12);
        assert!((z - 0.5 / 4.25f64.sqrt()).abs() < 1e-12);
        assert!((p.unwrap() - std::f64::consts::PI).abs() < 1e-12);
        assert!(t2.is_none());
        assert!((th.unwrap() - 2.0 * std::f64::consts::LN_2).abs() < 1e-12);
    }
}
