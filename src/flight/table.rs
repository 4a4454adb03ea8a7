//! The feedforward table: trim points along the schedule (pitch attitude, thrusts, elevators,
//! tilt) with the allocation of the feedback law at each, interpolated linearly in airspeed.
//!
//! Untrimmable points stay in the table (they mark where the vehicle leaves the corridor) but
//! the interpolation skips them and bridges between the trimmed neighbours. An elevator whose
//! pitch effectiveness at a point has the opposite sign to that at the wingborne end of the
//! table (a stalled tail in trim) is given no authority at that point. With a tilt
//! schedule the tilt command is the schedule itself at the measured airspeed.

use super::FlightError;
use crate::control::law::{allocation, feedback_inputs, Allocation, MAX_INPUTS};
use crate::control::TrimPoint;
use crate::scenario::Schedule;
use crate::vehicle::Vehicle;

/// A point of the table.
#[derive(Debug, Clone)]
pub struct TablePoint {
    /// The trim point.
    pub trim: TrimPoint,
    /// Allocation of the feedback law (zero when untrimmed).
    pub allocation: Allocation,
}

/// Feedforward at one airspeed (fixed size: computed in the integrator's right-hand side).
#[derive(Debug, Clone, Copy)]
pub struct Feedforward {
    /// Pitch attitude (rad).
    pub pitch_rad: f64,
    /// Feedback inputs: thrust per rotor (N), then elevators (rad).
    pub inputs: [f64; MAX_INPUTS],
    /// Tilt of each actuator (rad).
    pub tilt_rad: [f64; MAX_INPUTS],
    /// Allocation.
    pub allocation: Allocation,
    /// Index of the table point nearest in speed.
    pub nearest: usize,
}

impl Default for Feedforward {
    fn default() -> Self {
        Feedforward {
            pitch_rad: 0.0,
            inputs: [0.0; MAX_INPUTS],
            tilt_rad: [0.0; MAX_INPUTS],
            allocation: Allocation::zero(0),
            nearest: 0,
        }
    }
}

/// The table.
#[derive(Debug, Clone)]
pub struct FeedforwardTable {
    /// Every point in increasing speed.
    pub points: Vec<TablePoint>,
    /// Indices of the trimmed points.
    trimmed: Vec<usize>,
    /// The schedule flown.
    pub schedule: Schedule,
    /// Thrust groups, elevators, tilt actuators.
    counts: (usize, usize, usize),
}

impl FeedforwardTable {
    /// Build from trim points (any order).
    pub fn from_points(
        v: &Vehicle,
        mut points: Vec<TrimPoint>,
        schedule: &Schedule,
    ) -> Result<FeedforwardTable, FlightError> {
        let n = feedback_inputs(v);
        if n > MAX_INPUTS || v.actuators.len() > MAX_INPUTS {
            return Err(FlightError::TooManyInputs {
                inputs: n.max(v.actuators.len()),
                max: MAX_INPUTS,
            });
        }
        points.retain(|p| p.speed_mps.is_finite());
        points.sort_by(|a, b| a.speed_mps.total_cmp(&b.speed_mps));
        points.dedup_by(|a, b| a.speed_mps == b.speed_mps);
        let pts: Vec<TablePoint> = points
            .into_iter()
            .map(|mut trim| {
                let allocation = match (&trim.linear, trim.trimmed) {
                    (Some(lin), true) => allocation(v, &trim.state, &trim.controls, lin),
                    _ => {
                        trim.trimmed = false;
                        Allocation::zero(n)
                    }
                };
                TablePoint { trim, allocation }
            })
            .collect();
        let mut pts = pts;
        let trimmed: Vec<usize> = (0..pts.len()).filter(|&i| pts[i].trim.trimmed).collect();
        if trimmed.is_empty() {
            return Err(FlightError::NoTrimmedPoint);
        }
        // An elevator whose pitch effectiveness at a point is reversed against the wingborne
        // (highest-speed) end of the table works through a stalled surface there: the frozen
        // value would drive it the wrong way in flight, so it counts as having no authority.
        let nt = v.rotors.len();
        let top = trimmed[trimmed.len() - 1];
        for k in 0..v.elevators.len() {
            let j = nt + k;
            let reference = pts[top].allocation.effect[j][2];
            if reference == 0.0 {
                continue;
            }
            for &i in &trimmed {
                if pts[i].allocation.effect[j][2] * reference < 0.0 {
                    pts[i].allocation.effect[j] = [0.0; 3];
                    pts[i].allocation.weight[j] =
                        pts[i].allocation.weight[j].min(crate::control::law::WEIGHT_FLOOR);
                }
            }
        }
        Ok(FeedforwardTable {
            points: pts,
            trimmed,
            schedule: schedule.clone(),
            counts: (v.rotors.len(), v.elevators.len(), v.actuators.len()),
        })
    }

    /// Lowest and highest table speed (m/s).
    pub fn speed_range(&self) -> (f64, f64) {
        (
            self.points[0].trim.speed_mps,
            self.points[self.points.len() - 1].trim.speed_mps,
        )
    }

    /// The trimmed point nearest to `speed_mps`.
    pub fn nearest_trimmed(&self, speed_mps: f64) -> &TablePoint {
        let i = self
            .trimmed
            .iter()
            .copied()
            .min_by(|&a, &b| {
                let da = (self.points[a].trim.speed_mps - speed_mps).abs();
                let db = (self.points[b].trim.speed_mps - speed_mps).abs();
                da.total_cmp(&db)
            })
            .unwrap_or(0);
        &self.points[i]
    }

    /// Index of the table point nearest to `speed_mps` (trimmed or not).
    pub fn nearest(&self, speed_mps: f64) -> usize {
        let s = speed_mps;
        let k = self.points.partition_point(|p| p.trim.speed_mps < s);
        if k == 0 {
            0
        } else if k >= self.points.len() {
            self.points.len() - 1
        } else {
            let lo = self.points[k - 1].trim.speed_mps;
            let hi = self.points[k].trim.speed_mps;
            if s - lo <= hi - s {
                k - 1
            } else {
                k
            }
        }
    }

    /// Bracketing trimmed points and weight for `speed_mps`.
    fn bracket(&self, speed_mps: f64) -> (&TablePoint, &TablePoint, f64, f64) {
        let tr = &self.trimmed;
        let sp = |i: usize| self.points[tr[i]].trim.speed_mps;
        let s = if speed_mps.is_finite() {
            speed_mps
        } else {
            0.0
        };
        let k = tr.partition_point(|&i| self.points[i].trim.speed_mps < s);
        let (a, b, t) = if k == 0 {
            (0, 0, 0.0)
        } else if k >= tr.len() {
            (tr.len() - 1, tr.len() - 1, 0.0)
        } else {
            let (lo, hi) = (sp(k - 1), sp(k));
            (k - 1, k, ((s - lo) / (hi - lo)).clamp(0.0, 1.0))
        };
        (&self.points[tr[a]], &self.points[tr[b]], t, s)
    }

    /// The allocation at airspeed `speed_mps` (gain scheduling on the measured airspeed).
    pub fn allocation_at(&self, speed_mps: f64) -> Allocation {
        let (pa, pb, t, _) = self.bracket(speed_mps);
        Allocation::blend(&pa.allocation, &pb.allocation, t)
    }

    /// Scheduled tilt of actuator `i` at airspeed `speed_mps` (rad).
    pub fn tilt_at(&self, speed_mps: f64, i: usize) -> f64 {
        let (pa, pb, t, s) = self.bracket(speed_mps);
        match &self.schedule {
            Schedule::Tilt(tab) => tab.at(s),
            _ => (1.0 - t) * pa.trim.controls.tilt_rad[i] + t * pb.trim.controls.tilt_rad[i],
        }
    }

    /// Feedforward at airspeed `speed_mps` into `out` (no allocation).
    pub fn at(&self, speed_mps: f64, out: &mut Feedforward) {
        let (pa, pb, t, s) = self.bracket(speed_mps);
        let (nt, ne, na) = self.counts;
        out.pitch_rad = (1.0 - t) * pa.trim.state.theta_rad + t * pb.trim.state.theta_rad;
        for j in 0..nt + ne {
            out.inputs[j] = (1.0 - t) * pa.trim.controls.flat(j) + t * pb.trim.controls.flat(j);
        }
        for i in 0..na {
            out.tilt_rad[i] = match &self.schedule {
                Schedule::Tilt(tab) => tab.at(s),
                _ => (1.0 - t) * pa.trim.controls.tilt_rad[i] + t * pb.trim.controls.tilt_rad[i],
            };
        }
        out.allocation = Allocation::blend(&pa.allocation, &pb.allocation, t);
        out.nearest = self.nearest(s);
    }
}
