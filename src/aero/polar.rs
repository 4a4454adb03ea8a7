//! Full-circle section/surface polars: lift, drag and pitching-moment coefficients for any angle
//! of attack alpha on (-180, 180] deg, as hover and transition need.
//!
//! Conventions: alpha = atan2(w, u); CL along the lift axis (sin a, 0, -cos a) in body axes (x
//! forward, z down), CD along the drag axis (-cos a, 0, -sin a); normal force CN = CL cos a +
//! CD sin a (positive towards body -z); cm about the quarter chord, positive nose-up. Inputs
//! outside (-pi, pi] are wrapped onto it.
//!
//! Two kinds:
//!
//! - [`TablePolar`]: tabulated -180..180 deg, linear interpolation, validated for coverage,
//!   ordering, finiteness and wrap-around continuity.
//! - [`ParametricPolar`]: three flow regimes blended with weights that sum to one:
//!   1. forward attached flow, for alpha between the stall angles:
//!      CL = cl0 + a alpha, CD = cd0 + k CL^2, cm = cm0 (thin-airfoil behaviour, aerodynamic
//!      centre at c/4). Within 2 d below each stall angle (d = 0.5 deg, or a quarter of the stall
//!      angle if smaller) the incidence is rounded over by a quadratic so that the lift curve is
//!      C1 and has its maximum exactly at the stall angle, with CL,max = cl0 + a (alpha_s - d).
//!      Past the stall angle the attached part holds that value while its weight fades;
//!   2. reversed attached flow (trailing edge first) near +-180 deg: with beta = pi - alpha (wrapped)
//!      the fore-aft mirror image of the section, so the stall angles are mirrored
//!      (reverse stall at 180 - alpha_s,pos and -180 - alpha_s,neg). Lift
//!      CL = -f_r (cl0 + a beta) with the reverse lift factor f_r (about 0.7 is the usual
//!      wind-turbine polar-extrapolation practice), CD = cd0 + k CL^2, and the lift acting at
//!      the reversed quarter chord, 3c/4: cm = -cm0 - 0.5 CN;
//!   3. separated (flat-plate) flow, after the normal-force model of Hoerner (Fluid-Dynamic Drag,
//!      1965) whose leading terms are those of Viterna and Corrigan (1982): CN = (cd_max - cd0)
//!      sin alpha, CL = CN cos alpha, CD = CN sin alpha + cd0, so that CD(90 deg) = cd_max
//!      exactly (cd0 included) and CL(90 deg) = 0. The centre of pressure moves from c/4 to
//!      mid-chord at 90 deg and to 3c/4 at 180 deg: x_cp/c = 0.5 - 0.25 cos alpha, so
//!      cm = -(x_cp/c - 0.25) CN.
//!
//!   Blend: the weight of each attached regime is 1 between its stall angles and falls to 0 over
//!   the blend width W beyond each stall angle along a cubic smoothstep 1 - (3t^2 - 2t^3),
//!   t = (|beta| - |beta_s|) / W; the separated weight is the remainder. This replaces the
//!   logistic sigmoid of Beard and McLain (Small Unmanned Aircraft, 2012) by a compact-support
//!   step: the attached model is then exact between the stall angles and exactly absent beyond
//!   stall + W, and the curve is C1 everywhere, including across +-180 deg. The largest change
//!   between samples h apart is about 1.5 h |CL,max - CL,plate| / W, so W of 8-10 deg keeps
//!   0.1-deg steps below 0.02 for sections with CL,max up to about 1.6.

use serde::Serialize;
use std::f64::consts::{FRAC_PI_2, PI, TAU};

/// Aerodynamic coefficients of a surface at one angle of attack (dimensionless).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Coefficients {
    /// Lift coefficient, along the lift axis (perpendicular to the flow, "up" at alpha = 0).
    pub cl: f64,
    /// Drag coefficient, along the flow.
    pub cd: f64,
    /// Pitching-moment coefficient about the surface reference point (quarter chord), nose-up +.
    pub cm: f64,
}

/// Why a polar could not be built; messages say what to fix.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum PolarError {
    /// The columns do not have the same number of rows.
    #[error(
        "polar table columns differ in length (alpha {alpha}, cl {cl}, cd {cd}, cm {cm} rows); \
         hint: give one alpha, cl, cd and cm value on every row"
    )]
    LengthMismatch {
        /// Rows in the alpha column.
        alpha: usize,
        /// Rows in the cl column.
        cl: usize,
        /// Rows in the cd column.
        cd: usize,
        /// Rows in the cm column.
        cm: usize,
    },
    /// Too few rows to describe a polar.
    #[error("polar table has {rows} rows, at least 3 are needed; hint: tabulate alpha from -180 to 180 deg")]
    TooFewRows {
        /// Rows given.
        rows: usize,
    },
    /// A value is NaN or infinite.
    #[error("polar table row {row}: {column} is not a finite number ({value}); hint: replace it with a finite value")]
    NonFinite {
        /// 0-based data row.
        row: usize,
        /// Column name (`alpha_deg`, `cl`, `cd` or `cm`).
        column: &'static str,
        /// The value found.
        value: f64,
    },
    /// The table does not start at -180 deg.
    #[error(
        "polar table row 0: alpha is {alpha_deg} deg, the table must start at -180 deg; \
         hint: extend the table to cover the full circle -180..180 deg"
    )]
    FirstRowNotMinus180 {
        /// Alpha of the first row, deg.
        alpha_deg: f64,
    },
    /// The table does not end at +180 deg.
    #[error(
        "polar table row {row}: alpha is {alpha_deg} deg, the table must end at 180 deg; \
         hint: extend the table to cover the full circle -180..180 deg"
    )]
    LastRowNot180 {
        /// 0-based index of the last row.
        row: usize,
        /// Alpha of the last row, deg.
        alpha_deg: f64,
    },
    /// Alpha does not increase strictly from one row to the next.
    #[error(
        "polar table row {row}: alpha {alpha_deg} deg is not greater than {previous_deg} deg on the row before; \
         hint: sort the rows by increasing alpha and remove repeated angles"
    )]
    NotIncreasing {
        /// 0-based data row.
        row: usize,
        /// Alpha on this row, deg.
        alpha_deg: f64,
        /// Alpha on the previous row, deg.
        previous_deg: f64,
    },
    /// The values at -180 and +180 deg differ (they describe the same flow direction).
    #[error(
        "polar table row {row}: {column} at 180 deg is {last} but {first} at -180 deg (row 0); \
         hint: -180 and 180 deg are the same flow direction, give equal values (within 1e-6)"
    )]
    WrapMismatch {
        /// 0-based index of the last row.
        row: usize,
        /// Column name.
        column: &'static str,
        /// Value at -180 deg.
        first: f64,
        /// Value at +180 deg.
        last: f64,
    },
    /// A parametric-polar input is out of its valid range.
    #[error("parametric polar: {field} = {value} {problem}; hint: {hint}")]
    InvalidSpec {
        /// Name of the [`ParametricSpec`] field.
        field: &'static str,
        /// The value given.
        value: f64,
        /// What is wrong with it.
        problem: &'static str,
        /// How to fix it.
        hint: &'static str,
    },
}

impl PolarError {
    /// The 0-based data row the error refers to, where there is one (table errors only).
    pub fn row(&self) -> Option<usize> {
        match self {
            PolarError::NonFinite { row, .. }
            | PolarError::LastRowNot180 { row, .. }
            | PolarError::NotIncreasing { row, .. }
            | PolarError::WrapMismatch { row, .. } => Some(*row),
            PolarError::FirstRowNotMinus180 { .. } => Some(0),
            PolarError::LengthMismatch { .. }
            | PolarError::TooFewRows { .. }
            | PolarError::InvalidSpec { .. } => None,
        }
    }
}

/// Largest allowed difference between the rows at -180 and +180 deg.
const WRAP_TOLERANCE: f64 = 1e-6;
/// Tolerance on the first/last alpha being exactly -180/+180 deg, deg.
const END_ALPHA_TOLERANCE_DEG: f64 = 1e-9;
/// Half-width d of the rounding of the attached lift curve below each stall angle, rad (0.5 deg).
const STALL_ROUNDING_HALF_WIDTH_RAD: f64 = 0.5 * PI / 180.0;

/// Maps any angle onto (-pi, pi]. Values already on it are returned unchanged (bit for bit), so
/// that table nodes are hit exactly; non-finite input gives NaN.
fn wrap_alpha(alpha_rad: f64) -> f64 {
    if alpha_rad > -PI && alpha_rad <= PI {
        return alpha_rad;
    }
    let r = alpha_rad.rem_euclid(TAU);
    if r > PI {
        r - TAU
    } else {
        r
    }
}

/// Tabulated full-circle polar with linear interpolation.
#[derive(Debug, Clone, PartialEq)]
pub struct TablePolar {
    /// Node angles, rad; first exactly -pi, last exactly pi, strictly increasing.
    alpha_rad: Vec<f64>,
    cl: Vec<f64>,
    cd: Vec<f64>,
    cm: Vec<f64>,
    /// Positive and negative stall angles, rad (see [`Polar::stall_angles_rad`]).
    stall_rad: (f64, f64),
    /// Least-squares lift slope over |alpha| <= 5 deg, per rad.
    lift_slope_per_rad: f64,
}

impl TablePolar {
    /// rows must be strictly increasing in alpha, first row -180 deg, last row +180 deg, values at ±180 equal
    /// within 1e-6 (wrap-around continuity), all finite. Error names the row index (0-based data row) and what to fix.
    ///
    /// `alpha_deg` in degrees; `cl`, `cd`, `cm` dimensionless (cm about the quarter chord, nose-up +).
    pub fn new(
        alpha_deg: &[f64],
        cl: &[f64],
        cd: &[f64],
        cm: &[f64],
    ) -> Result<TablePolar, PolarError> {
        let n = alpha_deg.len();
        if cl.len() != n || cd.len() != n || cm.len() != n {
            return Err(PolarError::LengthMismatch {
                alpha: n,
                cl: cl.len(),
                cd: cd.len(),
                cm: cm.len(),
            });
        }
        if n < 3 {
            return Err(PolarError::TooFewRows { rows: n });
        }
        for row in 0..n {
            for (column, value) in [
                ("alpha_deg", alpha_deg[row]),
                ("cl", cl[row]),
                ("cd", cd[row]),
                ("cm", cm[row]),
            ] {
                if !value.is_finite() {
                    return Err(PolarError::NonFinite { row, column, value });
                }
            }
        }
        if (alpha_deg[0] + 180.0).abs() > END_ALPHA_TOLERANCE_DEG {
            return Err(PolarError::FirstRowNotMinus180 {
                alpha_deg: alpha_deg[0],
            });
        }
        let mut alpha_rad: Vec<f64> = alpha_deg.iter().map(|a| a.to_radians()).collect();
        alpha_rad[0] = -PI;
        for row in 1..n {
            // Checked in radians too: two angles closer than the resolution of the conversion
            // would give a zero-width interpolation interval.
            if alpha_deg[row] <= alpha_deg[row - 1] || alpha_rad[row] <= alpha_rad[row - 1] {
                return Err(PolarError::NotIncreasing {
                    row,
                    alpha_deg: alpha_deg[row],
                    previous_deg: alpha_deg[row - 1],
                });
            }
        }
        let last = n - 1;
        if (alpha_deg[last] - 180.0).abs() > END_ALPHA_TOLERANCE_DEG {
            return Err(PolarError::LastRowNot180 {
                row: last,
                alpha_deg: alpha_deg[last],
            });
        }
        alpha_rad[last] = PI;
        if alpha_rad[last - 1] >= PI {
            return Err(PolarError::NotIncreasing {
                row: last,
                alpha_deg: alpha_deg[last],
                previous_deg: alpha_deg[last - 1],
            });
        }
        for (column, values) in [("cl", cl), ("cd", cd), ("cm", cm)] {
            if (values[0] - values[last]).abs() > WRAP_TOLERANCE {
                return Err(PolarError::WrapMismatch {
                    row: last,
                    column,
                    first: values[0],
                    last: values[last],
                });
            }
        }
        let mut polar = TablePolar {
            alpha_rad,
            cl: cl.to_vec(),
            cd: cd.to_vec(),
            cm: cm.to_vec(),
            stall_rad: (0.0, 0.0),
            lift_slope_per_rad: 0.0,
        };
        polar.stall_rad = (polar.find_positive_stall(), polar.find_negative_stall());
        polar.lift_slope_per_rad = polar.fit_lift_slope();
        Ok(polar)
    }

    /// Coefficients at `alpha_rad` (rad, any value; wrapped to (-pi, pi]) by linear interpolation
    /// between nodes; exact at the nodes. No allocation, binary search (O(log n)).
    pub fn coefficients(&self, alpha_rad: f64) -> Coefficients {
        let x = wrap_alpha(alpha_rad);
        let n = self.alpha_rad.len();
        // First node strictly above x; the interval is [right - 1, right]. Clamping keeps NaN
        // input (which compares false everywhere) inside the arrays.
        let right = self.alpha_rad.partition_point(|&a| a <= x).clamp(1, n - 1);
        let left = right - 1;
        let (x0, x1) = (self.alpha_rad[left], self.alpha_rad[right]);
        let t = (x - x0) / (x1 - x0);
        // (1 - t) v0 + t v1 is exact at both ends (t = 0 and t = 1).
        let lerp = |v: &[f64]| (1.0 - t) * v[left] + t * v[right];
        Coefficients {
            cl: lerp(&self.cl),
            cd: lerp(&self.cd),
            cm: lerp(&self.cm),
        }
    }

    /// Number of rows in the table.
    pub fn len(&self) -> usize {
        self.alpha_rad.len()
    }

    /// Always false: a valid table has at least 3 rows.
    pub fn is_empty(&self) -> bool {
        self.alpha_rad.is_empty()
    }

    /// First local maximum of cl over nodes with alpha in (0, 60 deg]; if there is none, the
    /// angle of the largest cl on that interval (its end included).
    fn find_positive_stall(&self) -> f64 {
        let limit = 60f64.to_radians();
        let n = self.alpha_rad.len();
        for k in 1..n - 1 {
            let a = self.alpha_rad[k];
            if a <= 0.0 {
                continue;
            }
            if a > limit {
                break;
            }
            if self.cl[k] >= self.cl[k - 1] && self.cl[k] > self.cl[k + 1] {
                return a;
            }
        }
        self.extreme_on(0.0, limit, 1.0)
    }

    /// First local minimum of cl over nodes with alpha in [-60 deg, 0), searching from 0
    /// downwards; if there is none, the angle of the smallest cl on that interval.
    fn find_negative_stall(&self) -> f64 {
        let limit = -60f64.to_radians();
        let n = self.alpha_rad.len();
        for k in (1..n - 1).rev() {
            let a = self.alpha_rad[k];
            if a >= 0.0 {
                continue;
            }
            if a < limit {
                break;
            }
            if self.cl[k] <= self.cl[k + 1] && self.cl[k] < self.cl[k - 1] {
                return a;
            }
        }
        self.extreme_on(limit, 0.0, -1.0)
    }

    /// Angle of the largest `sign * cl` among the nodes inside (lo, hi) and the two interval ends
    /// (rad). Used only when the table has no local extremum there.
    fn extreme_on(&self, lo: f64, hi: f64, sign: f64) -> f64 {
        let end = if sign > 0.0 { hi } else { lo };
        let mut best_alpha = end;
        let mut best = sign * self.coefficients(end).cl;
        for (k, &a) in self.alpha_rad.iter().enumerate() {
            if a > lo && a < hi && sign * self.cl[k] > best {
                best = sign * self.cl[k];
                best_alpha = a;
            }
        }
        best_alpha
    }

    /// Least-squares slope of cl against alpha over |alpha| <= 5 deg, per rad: over the nodes in
    /// that range when there are at least 3, else over 21 evenly spaced interpolated points.
    fn fit_lift_slope(&self) -> f64 {
        let limit = 5f64.to_radians() * (1.0 + 1e-12);
        let mut sums = LineFit::default();
        for (k, &a) in self.alpha_rad.iter().enumerate() {
            if a.abs() <= limit {
                sums.add(a, self.cl[k]);
            }
        }
        if sums.count < 3 {
            sums = LineFit::default();
            for i in 0..=20 {
                let a = (-5.0 + 0.5 * f64::from(i)).to_radians();
                sums.add(a, self.coefficients(a).cl);
            }
        }
        sums.slope()
    }
}

/// Running sums for a least-squares straight line.
#[derive(Default)]
struct LineFit {
    count: usize,
    sx: f64,
    sy: f64,
    sxx: f64,
    sxy: f64,
}

impl LineFit {
    fn add(&mut self, x: f64, y: f64) {
        self.count += 1;
        self.sx += x;
        self.sy += y;
        self.sxx += x * x;
        self.sxy += x * y;
    }

    fn slope(&self) -> f64 {
        let n = self.count as f64;
        (n * self.sxy - self.sx * self.sy) / (n * self.sxx - self.sx * self.sx)
    }
}

/// Inputs of a [`ParametricPolar`], in radians and per radian.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ParametricSpec {
    /// Finite-wing lift slope a, per rad (> 0); the caller computes it with Helmbold or
    /// lifting-line theory from the section slope.
    pub lift_slope_per_rad: f64,
    /// Lift coefficient at alpha = 0 (camber); 0 for a symmetric section.
    pub cl0: f64,
    /// Positive stall angle, rad (0 < alpha_s,pos, and alpha_s,pos + blend width < pi/2).
    pub alpha_stall_pos_rad: f64,
    /// Negative stall angle, rad (negative, e.g. -0.26; |alpha_s,neg| + blend width < pi/2).
    pub alpha_stall_neg_rad: f64,
    /// Zero-lift drag coefficient (>= 0); attached CD = cd0 + k CL^2.
    pub cd0: f64,
    /// Induced-drag factor k (>= 0), e.g. 1/(pi e AR) for a wing.
    pub induced_drag_factor: f64,
    /// Pitching-moment coefficient about c/4 in attached flow, nose-up +.
    pub cm0: f64,
    /// Drag coefficient normal to the flow, at 90 deg (> cd0); e.g. `viterna_cd_max(AR)`.
    /// CD(90 deg) equals this value exactly (cd0 is included in it).
    pub cd_max: f64,
    /// Scale on lift in reversed (trailing-edge-first) attached flow, 0..=2 (about 0.7 is
    /// common practice).
    pub reverse_lift_factor: f64,
    /// Width W of the smooth transition from attached to separated flow beyond each stall
    /// angle, rad (> 0).
    pub blend_width_rad: f64,
}

/// parametric full-range polar (DEVELOPERS.md, "Conventions"): attached part + post-stall flat-plate part, continuous on the full circle
///
/// See the module documentation for the formulas.
#[derive(Debug, Clone, PartialEq)]
pub struct ParametricPolar {
    spec: ParametricSpec,
    /// Rounding half-width d below each stall angle, rad.
    rounding_rad: f64,
}

/// Cubic smoothstep 3t^2 - 2t^3 on [0, 1], clamped outside.
fn smoothstep(t: f64) -> f64 {
    let t = t.clamp(0.0, 1.0);
    t * t * (3.0 - 2.0 * t)
}

/// Weight of an attached regime at incidence `beta` (rad): 1 between the stall angles, falling to
/// 0 over `width` beyond each.
fn attached_weight(beta: f64, pos: f64, neg: f64, width: f64) -> f64 {
    if beta > pos {
        1.0 - smoothstep((beta - pos) / width)
    } else if beta < neg {
        1.0 - smoothstep((neg - beta) / width)
    } else {
        1.0
    }
}

/// Effective incidence of the attached model (rad): beta itself up to 2d before each stall angle,
/// then a quadratic round-over reaching zero slope at the stall angle (value stall -+ d), then
/// constant. C1 throughout.
fn rounded_incidence(beta: f64, pos: f64, neg: f64, d: f64) -> f64 {
    if beta >= pos {
        pos - d
    } else if beta > pos - 2.0 * d {
        let u = beta - (pos - 2.0 * d);
        beta - u * u / (4.0 * d)
    } else if beta <= neg {
        neg + d
    } else if beta < neg + 2.0 * d {
        let u = (neg + 2.0 * d) - beta;
        beta + u * u / (4.0 * d)
    } else {
        beta
    }
}

impl ParametricPolar {
    /// Validates the spec (all finite; slope > 0; stall angles of the right signs, each with the
    /// blend width below 90 deg; cd0, k >= 0; cd_max > cd0; reverse factor 0..=2; blend width > 0).
    pub fn new(spec: ParametricSpec) -> Result<ParametricPolar, PolarError> {
        let fields = [
            ("lift_slope_per_rad", spec.lift_slope_per_rad),
            ("cl0", spec.cl0),
            ("alpha_stall_pos_rad", spec.alpha_stall_pos_rad),
            ("alpha_stall_neg_rad", spec.alpha_stall_neg_rad),
            ("cd0", spec.cd0),
            ("induced_drag_factor", spec.induced_drag_factor),
            ("cm0", spec.cm0),
            ("cd_max", spec.cd_max),
            ("reverse_lift_factor", spec.reverse_lift_factor),
            ("blend_width_rad", spec.blend_width_rad),
        ];
        for (field, value) in fields {
            if !value.is_finite() {
                return Err(invalid(
                    field,
                    value,
                    "is not finite",
                    "give a finite number",
                ));
            }
        }
        if spec.lift_slope_per_rad <= 0.0 {
            return Err(invalid(
                "lift_slope_per_rad",
                spec.lift_slope_per_rad,
                "must be positive",
                "give the finite-wing slope per rad, e.g. from helmbold_lift_slope",
            ));
        }
        if spec.blend_width_rad <= 0.0 {
            return Err(invalid(
                "blend_width_rad",
                spec.blend_width_rad,
                "must be positive",
                "use a few degrees, e.g. 8-10 deg (0.14-0.17 rad)",
            ));
        }
        let w = spec.blend_width_rad;
        if spec.alpha_stall_pos_rad <= 0.0 || spec.alpha_stall_pos_rad + w >= FRAC_PI_2 {
            return Err(invalid(
                "alpha_stall_pos_rad",
                spec.alpha_stall_pos_rad,
                "must be positive and, with the blend width added, below 90 deg",
                "give the positive stall angle in rad (e.g. 0.26), and a blend width small enough",
            ));
        }
        if spec.alpha_stall_neg_rad >= 0.0 || -spec.alpha_stall_neg_rad + w >= FRAC_PI_2 {
            return Err(invalid(
                "alpha_stall_neg_rad",
                spec.alpha_stall_neg_rad,
                "must be negative and, with the blend width added, above -90 deg",
                "give the negative stall angle in rad with its sign (e.g. -0.26)",
            ));
        }
        if spec.cd0 < 0.0 {
            return Err(invalid(
                "cd0",
                spec.cd0,
                "must not be negative",
                "typical sections have 0.005-0.02",
            ));
        }
        if spec.induced_drag_factor < 0.0 {
            return Err(invalid(
                "induced_drag_factor",
                spec.induced_drag_factor,
                "must not be negative",
                "use 1/(pi e AR) for a wing, or 0",
            ));
        }
        if spec.cd_max <= spec.cd0 {
            return Err(invalid(
                "cd_max",
                spec.cd_max,
                "must exceed cd0",
                "cd_max is the drag normal to the flow, about 1.1-2.0 (viterna_cd_max(AR))",
            ));
        }
        if !(0.0..=2.0).contains(&spec.reverse_lift_factor) {
            return Err(invalid(
                "reverse_lift_factor",
                spec.reverse_lift_factor,
                "must lie in 0..=2",
                "about 0.7 is common practice",
            ));
        }
        let rounding_rad = STALL_ROUNDING_HALF_WIDTH_RAD
            .min(spec.alpha_stall_pos_rad / 4.0)
            .min(-spec.alpha_stall_neg_rad / 4.0);
        Ok(ParametricPolar { spec, rounding_rad })
    }

    /// The spec this polar was built from.
    pub fn spec(&self) -> &ParametricSpec {
        &self.spec
    }

    /// Coefficients at `alpha_rad` (rad, any value; wrapped to (-pi, pi]). Finite for finite input;
    /// NaN for NaN or infinite input. No allocation.
    pub fn coefficients(&self, alpha_rad: f64) -> Coefficients {
        let s = &self.spec;
        let x = wrap_alpha(alpha_rad);
        let (pos, neg, width, d) = (
            s.alpha_stall_pos_rad,
            s.alpha_stall_neg_rad,
            s.blend_width_rad,
            self.rounding_rad,
        );
        let (sin_a, cos_a) = x.sin_cos();

        // Forward attached flow.
        let w_fwd = attached_weight(x, pos, neg, width);
        let cl_fwd = s.cl0 + s.lift_slope_per_rad * rounded_incidence(x, pos, neg, d);
        let cd_fwd = s.cd0 + s.induced_drag_factor * cl_fwd * cl_fwd;
        let cm_fwd = s.cm0;

        // Reversed attached flow: the fore-aft mirror image, beta = pi - alpha wrapped.
        let beta = if x >= 0.0 { PI - x } else { -PI - x };
        let w_rev = attached_weight(beta, pos, neg, width);
        let lift_rev = s.reverse_lift_factor
            * (s.cl0 + s.lift_slope_per_rad * rounded_incidence(beta, pos, neg, d));
        let cl_rev = -lift_rev;
        let cd_rev = s.cd0 + s.induced_drag_factor * lift_rev * lift_rev;
        let cn_rev = cl_rev * cos_a + cd_rev * sin_a;
        // Lift at the reversed quarter chord (3c/4), camber moment mirrored.
        let cm_rev = -s.cm0 - 0.5 * cn_rev;

        // Separated, flat-plate flow; CD(90 deg) = cd_max.
        let w_sep = 1.0 - w_fwd - w_rev;
        let cn_sep = (s.cd_max - s.cd0) * sin_a;
        let cl_sep = cn_sep * cos_a;
        let cd_sep = cn_sep * sin_a + s.cd0;
        let x_cp = 0.5 - 0.25 * cos_a;
        let cm_sep = -(x_cp - 0.25) * cn_sep;

        Coefficients {
            cl: w_fwd * cl_fwd + w_rev * cl_rev + w_sep * cl_sep,
            cd: w_fwd * cd_fwd + w_rev * cd_rev + w_sep * cd_sep,
            cm: w_fwd * cm_fwd + w_rev * cm_rev + w_sep * cm_sep,
        }
    }
}

fn invalid(
    field: &'static str,
    value: f64,
    problem: &'static str,
    hint: &'static str,
) -> PolarError {
    PolarError::InvalidSpec {
        field,
        value,
        problem,
        hint,
    }
}

/// A full-circle polar of either kind.
#[derive(Debug, Clone)]
pub enum Polar {
    /// Tabulated polar.
    Table(TablePolar),
    /// Parametric attached + flat-plate polar.
    Parametric(ParametricPolar),
}

impl From<TablePolar> for Polar {
    fn from(p: TablePolar) -> Polar {
        Polar::Table(p)
    }
}

impl From<ParametricPolar> for Polar {
    fn from(p: ParametricPolar) -> Polar {
        Polar::Parametric(p)
    }
}

impl Polar {
    /// Coefficients at `alpha_rad` (rad, any value, wrapped to (-pi, pi]); hot path, no allocation.
    pub fn coefficients(&self, alpha_rad: f64) -> Coefficients {
        match self {
            Polar::Table(p) => p.coefficients(alpha_rad),
            Polar::Parametric(p) => p.coefficients(alpha_rad),
        }
    }

    /// positive and negative stall angles (rad): parametric = spec; table = first local max of cl for alpha in (0, 60deg], first local min for alpha in [-60deg, 0)
    ///
    /// A table with no local extremum there reports the angle of the largest (smallest) cl on
    /// the interval.
    pub fn stall_angles_rad(&self) -> (f64, f64) {
        match self {
            Polar::Table(p) => p.stall_rad,
            Polar::Parametric(p) => (p.spec.alpha_stall_pos_rad, p.spec.alpha_stall_neg_rad),
        }
    }

    /// Lift slope, per rad: parametric = spec; table = least-squares slope over |alpha| <= 5 deg.
    pub fn lift_slope_per_rad(&self) -> f64 {
        match self {
            Polar::Table(p) => p.lift_slope_per_rad,
            Polar::Parametric(p) => p.spec.lift_slope_per_rad,
        }
    }

    /// Lift coefficient at the positive stall angle (-).
    pub fn cl_max(&self) -> f64 {
        self.coefficients(self.stall_angles_rad().0).cl
    }

    /// Lift coefficient at the negative stall angle (-).
    pub fn cl_min(&self) -> f64 {
        self.coefficients(self.stall_angles_rad().1).cl
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wrap_keeps_values_in_range_bit_for_bit() {
        for x in [0.1, -3.0, PI, 1e-300] {
            assert_eq!(wrap_alpha(x).to_bits(), x.to_bits());
        }
        assert_eq!(wrap_alpha(-PI), PI);
        assert!((wrap_alpha(3.0 * PI) - PI).abs() < 1e-12);
        assert!((wrap_alpha(0.5 + 4.0 * TAU) - 0.5).abs() < 1e-12);
        assert!((wrap_alpha(-0.5 - 7.0 * TAU) + 0.5).abs() < 1e-12);
        let huge = wrap_alpha(-1e300);
        assert!(huge > -PI && huge <= PI);
        assert!(wrap_alpha(f64::INFINITY).is_nan());
    }

    #[test]
    fn rounding_is_continuous_and_flat_at_stall() {
        let (pos, neg, d) = (0.25, -0.2, 0.01);
        let h = 1e-7;
        for &b in &[pos - 2.0 * d, pos, neg, neg + 2.0 * d] {
            let below = rounded_incidence(b - h, pos, neg, d);
            let above = rounded_incidence(b + h, pos, neg, d);
            assert!((above - below).abs() < 3e-7, "jump at {b}");
        }
        // Slope 1 entering the rounding, 0 at the stall angle.
        let slope = |b: f64| {
            (rounded_incidence(b + h, pos, neg, d) - rounded_incidence(b - h, pos, neg, d))
                / (2.0 * h)
        };
        assert!((slope(pos - 2.0 * d) - 1.0).abs() < 1e-5);
        assert!(slope(pos - 1e-6).abs() < 1e-3);
        assert!((rounded_incidence(pos, pos, neg, d) - (pos - d)).abs() < 1e-15);
        assert!((rounded_incidence(neg, pos, neg, d) - (neg + d)).abs() < 1e-15);
    }

    #[test]
    fn weight_is_one_inside_and_zero_beyond_blend() {
        assert_eq!(attached_weight(0.1, 0.2, -0.2, 0.1), 1.0);
        assert_eq!(attached_weight(0.3, 0.2, -0.2, 0.1), 0.0);
        assert_eq!(attached_weight(-0.35, 0.2, -0.2, 0.1), 0.0);
        assert!((attached_weight(0.25, 0.2, -0.2, 0.1) - 0.5).abs() < 1e-12);
    }

    #[test]
    fn line_fit_recovers_a_line() {
        let mut f = LineFit::default();
        for i in 0..5 {
            let x = f64::from(i);
            f.add(x, 2.0 * x - 1.0);
        }
        assert!((f.slope() - 2.0).abs() < 1e-12);
    }
}
