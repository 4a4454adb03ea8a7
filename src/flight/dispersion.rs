//! Monte Carlo dispersion of the transition flight: `N` flights of vehicles whose mass, CG,
//! surface forces and rotor thrust and power available are drawn from normal distributions
//! (truncated at three standard deviations) about the nominal vehicle, all flown with the
//! nominal feedforward table and feedback law, as a flight-control system designed on the
//! nominal model would fly them. Each flight starts from the nominal trim state, so a dispersed
//! vehicle first settles onto its own equilibrium.
//!
//! - mass: `m (1 + s_m z)`, pitch inertia scaled with it (radius of gyration kept);
//! - CG: `x_cg + s_cg z` (m);
//! - aerodynamics: every force and moment of each surface (and of the derivative model) scaled
//!   by `1 + s_a z`, one draw per surface (its area is scaled);
//! - rotors: thrust cap and power available of each group scaled by `1 + s_t z`, one draw per
//!   group.
//!
//! Random numbers: SplitMix64 (Steele, Lea and Flood, "Fast splittable pseudorandom number
//! generators", OOPSLA 2014) seeded from the scenario's seed and the run index, so every run is
//! reproducible on its own and the result does not depend on the number of threads; normal
//! deviates by the Box-Muller transform (Box and Muller, Ann. Math. Statist. 29, 1958).

use rayon::prelude::*;
use serde::Serialize;

use super::{fly, FeedforwardTable, Flight, FlightError, FlightSettings, Manoeuvre};
use crate::atmosphere::Atmosphere;
use crate::scenario::DispersionFile;
use crate::vehicle::{Point, Vehicle};

/// SplitMix64 generator.
#[derive(Debug, Clone, Copy)]
pub struct SplitMix64(u64);

impl SplitMix64 {
    /// A generator for run `index` of the sequence `seed`.
    pub fn new(seed: u64, index: u64) -> SplitMix64 {
        let mut g = SplitMix64(seed ^ 0x9E37_79B9_7F4A_7C15u64.wrapping_mul(index.wrapping_add(1)));
        g.next_u64();
        g
    }

    /// Next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform on (0, 1).
    pub fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// Standard normal deviate (Box-Muller), truncated at three standard deviations by
    /// redrawing.
    pub fn normal(&mut self) -> f64 {
        loop {
            let (u1, u2) = (self.uniform(), self.uniform());
            let z = (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos();
            if z.abs() <= 3.0 {
                return z;
            }
        }
    }
}

/// The draws of one dispersed vehicle.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Draw {
    /// Run index.
    pub index: usize,
    /// Mass (kg).
    pub mass_kg: f64,
    /// CG shift along body x (m).
    pub cg_shift_x_m: f64,
    /// Scale on each surface's forces (-), in vehicle order (derivative model last).
    pub aero_scale: Vec<f64>,
    /// Scale on each rotor group's thrust and power available (-).
    pub thrust_scale: Vec<f64>,
}

/// Draw dispersed vehicle `index` of the sequence.
pub fn disperse(v: &Vehicle, d: &DispersionFile, index: usize) -> (Vehicle, Draw) {
    let mut g = SplitMix64::new(d.seed, index as u64);
    let mass = v.mass_kg * (1.0 + 0.01 * d.mass_pct * g.normal()).max(0.1);
    let dx = d.cg_x_m * g.normal();
    let mut out = v.with_mass_case(Some(mass), Point { x_m: dx, z_m: 0.0 });
    let mut aero = Vec::with_capacity(v.surfaces.len() + 1);
    for s in &mut out.surfaces {
        let k = (1.0 + 0.01 * d.aero_pct * g.normal()).max(0.1);
        s.area_m2 *= k;
        aero.push(k);
    }
    if let Some(dm) = &mut out.derivatives {
        let k = (1.0 + 0.01 * d.aero_pct * g.normal()).max(0.1);
        dm.area_m2 *= k;
        aero.push(k);
    }
    let mut thrust = Vec::with_capacity(v.rotors.len());
    for r in &mut out.rotors {
        let k = (1.0 + 0.01 * d.thrust_pct * g.normal()).max(0.1);
        r.thrust_max_n *= k;
        r.power_max_w *= k;
        thrust.push(k);
    }
    (
        out,
        Draw {
            index,
            mass_kg: mass,
            cg_shift_x_m: dx,
            aero_scale: aero,
            thrust_scale: thrust,
        },
    )
}

/// The figures of one dispersed flight.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DispersedFlight {
    /// The draws.
    pub draw: Draw,
    /// Why the flight could not be flown or was stopped (departure).
    pub failed: Option<String>,
    /// Transition time (s), when completed.
    pub transition_time_s: Option<f64>,
    /// Largest height below the reference (m).
    pub height_lost_m: f64,
    /// Largest height above the reference (m).
    pub height_gained_m: f64,
    /// Time beyond stall of each surface (s).
    pub time_beyond_stall_s: Vec<f64>,
    /// Energy drawn by all rotors (J).
    pub energy_j: f64,
}

/// Spread of one figure over the runs that have it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Spread {
    /// What.
    pub name: String,
    /// Runs that have the figure.
    pub count: usize,
    /// Mean.
    pub mean: f64,
    /// Standard deviation.
    pub std_dev: f64,
    /// Smallest.
    pub min: f64,
    /// 5th percentile.
    pub p5: f64,
    /// Median.
    pub median: f64,
    /// 95th percentile.
    pub p95: f64,
    /// Largest.
    pub max: f64,
}

/// Spread of `values` (empty gives count 0 and NaN figures).
pub fn spread(name: &str, values: &[f64]) -> Spread {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    let pct = |p: f64| {
        if n == 0 {
            f64::NAN
        } else {
            // Linear interpolation between closest ranks.
            let r = p * (n - 1) as f64;
            let (i, f) = (r.floor() as usize, r - r.floor());
            if i + 1 < n {
                v[i] + f * (v[i + 1] - v[i])
            } else {
                v[n - 1]
            }
        }
    };
    let mean = if n > 0 {
        v.iter().sum::<f64>() / n as f64
    } else {
        f64::NAN
    };
    let sd = if n > 1 {
        (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt()
    } else {
        f64::NAN
    };
    Spread {
        name: name.to_string(),
        count: n,
        mean,
        std_dev: sd,
        min: pct(0.0),
        p5: pct(0.05),
        median: pct(0.5),
        p95: pct(0.95),
        max: pct(1.0),
    }
}

/// Result of a dispersion run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Dispersion {
    /// The uncertainties.
    pub settings: DispersionFile,
    /// Every run.
    pub flights: Vec<DispersedFlight>,
    /// Runs that could not be flown or departed.
    pub failed: usize,
    /// Runs that completed the transition.
    pub completed: usize,
    /// Spread of the transition time, height lost and gained, energy and each surface's time
    /// beyond stall.
    pub spreads: Vec<Spread>,
}

fn figures(v: &Vehicle, draw: Draw, f: Result<Flight, FlightError>) -> DispersedFlight {
    let nsurf = v.surfaces.len() + usize::from(v.derivatives.is_some());
    match f {
        Ok(f) => {
            let s = &f.summary;
            DispersedFlight {
                draw,
                failed: s.stopped.clone(),
                transition_time_s: s.transition.as_ref().map(|t| t.time_s),
                height_lost_m: s.height_lost_m,
                height_gained_m: s.height_gained_m,
                time_beyond_stall_s: s.surfaces.iter().map(|x| x.time_beyond_stall_s).collect(),
                energy_j: s.energy_j,
            }
        }
        Err(e) => DispersedFlight {
            draw,
            failed: Some(e.to_string()),
            transition_time_s: None,
            height_lost_m: f64::NAN,
            height_gained_m: f64::NAN,
            time_beyond_stall_s: vec![f64::NAN; nsurf],
            energy_j: f64::NAN,
        },
    }
}

/// Fly `n` dispersed vehicles in parallel (rayon); `progress` is called once per flight.
#[allow(clippy::too_many_arguments)]
pub fn run_dispersions(
    v: &Vehicle,
    atm: &Atmosphere,
    table: &FeedforwardTable,
    settings: &FlightSettings,
    manoeuvre: Manoeuvre,
    d: &DispersionFile,
    n: usize,
    progress: &(dyn Fn() + Sync),
) -> Dispersion {
    let flights: Vec<DispersedFlight> = (0..n)
        .into_par_iter()
        .map(|k| {
            let (dv, draw) = disperse(v, d, k);
            let f = fly(&dv, atm, table, settings, manoeuvre, &|_| {});
            progress();
            figures(&dv, draw, f)
        })
        .collect();
    let ok: Vec<&DispersedFlight> = flights.iter().filter(|f| f.failed.is_none()).collect();
    let mut spreads = vec![
        spread(
            "transition time (s)",
            &ok.iter()
                .filter_map(|f| f.transition_time_s)
                .collect::<Vec<_>>(),
        ),
        spread(
            "height lost (m)",
            &ok.iter().map(|f| f.height_lost_m).collect::<Vec<_>>(),
        ),
        spread(
            "height gained (m)",
            &ok.iter().map(|f| f.height_gained_m).collect::<Vec<_>>(),
        ),
        spread(
            "energy (kJ)",
            &ok.iter().map(|f| f.energy_j / 1000.0).collect::<Vec<_>>(),
        ),
    ];
    let names = super::summary::surface_stall(v);
    for (i, (name, _, _)) in names.iter().enumerate() {
        let vals: Vec<f64> = ok
            .iter()
            .map(|f| f.time_beyond_stall_s.get(i).copied().unwrap_or(f64::NAN))
            .collect();
        spreads.push(spread(&format!("time beyond stall, {name} (s)"), &vals));
    }
    Dispersion {
        settings: d.clone(),
        failed: flights.iter().filter(|f| f.failed.is_some()).count(),
        completed: ok.iter().filter(|f| f.transition_time_s.is_some()).count(),
        flights,
        spreads,
    }
}
