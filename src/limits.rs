//! Sanity bounds: the magnitudes an input may have, and the counts that may size an
//! allocation.
//!
//! The physical bounds are our own sanity bounds, generous on purpose (common practice, not
//! requirements): they let any small drone or mid-size VTOL aircraft through and refuse only
//! values that no airframe has, such as a 1e200 m chord or a 1e-200 kg mass, whose arithmetic
//! overflows into infinities and NaNs further down. Every validation step takes its bounds
//! from here, so the hints and README.md quote one set of numbers.
//!
//! The count limits keep every grid, table and time history inside memory: a count is
//! computed in floating point and checked against its limit before anything is allocated.

/// A closed range of plausible values of one kind of quantity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bound {
    /// Smallest plausible value.
    pub min: f64,
    /// Largest plausible value.
    pub max: f64,
    /// Unit shown in messages.
    pub unit: &'static str,
}

impl Bound {
    /// Whether `v` is finite and inside the bound.
    pub fn contains(&self, v: f64) -> bool {
        v.is_finite() && (self.min..=self.max).contains(&v)
    }

    /// The bound as text for a hint, e.g. `0.01..100000 kg`.
    pub fn text(&self) -> String {
        format!("{}..{} {}", self.min, self.max, self.unit)
            .trim_end()
            .to_string()
    }

    /// A value in this bound's unit for a message, e.g. `1e200 m`.
    pub fn value(&self, v: f64) -> String {
        format!("{} {}", show(v), self.unit).trim_end().to_string()
    }
}

/// Vehicle mass: a 10 g micro drone to a 100 t aircraft.
pub const MASS_KG: Bound = Bound {
    min: 0.01,
    max: 1e5,
    unit: "kg",
};

/// Pitch inertia about the CG.
pub const PITCH_INERTIA_KG_M2: Bound = Bound {
    min: 1e-7,
    max: 1e9,
    unit: "kg m^2",
};

/// A size: chord, span, radius, reference lengths.
pub const LENGTH_M: Bound = Bound {
    min: 1e-4,
    max: 1e3,
    unit: "m",
};

/// A position coordinate in body axes, or a CG shift (absolute value).
pub const POSITION_M: Bound = Bound {
    min: -1e3,
    max: 1e3,
    unit: "m",
};

/// An area: surface, reference or derivative-model area.
pub const AREA_M2: Bound = Bound {
    min: 1e-8,
    max: 1e5,
    unit: "m^2",
};

/// Thrust cap of one rotor.
pub const THRUST_N: Bound = Bound {
    min: 1e-3,
    max: 1e7,
    unit: "N",
};

/// Shaft power available to one rotor.
pub const POWER_W: Bound = Bound {
    min: 1e-3,
    max: 1e9,
    unit: "W",
};

/// Airspeed of a sweep, a schedule or a trim point.
pub const SPEED_MPS: Bound = Bound {
    min: 0.0,
    max: 300.0,
    unit: "m/s",
};

/// Rate limit of a tilt actuator.
pub const RATE_DEG_S: Bound = Bound {
    min: 1e-3,
    max: 1e4,
    unit: "deg/s",
};

/// Planned acceleration or deceleration along the path.
pub const ACCELERATION_MPS2: Bound = Bound {
    min: 1e-3,
    max: 100.0,
    unit: "m/s^2",
};

/// Offset of the ISA temperature: the hottest and coldest days on record lie within 60 K of
/// ISA at their altitude.
pub const TEMPERATURE_OFFSET_K: Bound = Bound {
    min: -100.0,
    max: 100.0,
    unit: "K",
};

/// A coefficient of the `[derivatives]` model (per rad, or plain): measured values stay
/// within a few tens.
pub const DERIVATIVE_PER_RAD: Bound = Bound {
    min: -1e3,
    max: 1e3,
    unit: "",
};

/// Magnitude of a tabulated polar coefficient (cl, cd, cm); measured values stay below 3.
pub const POLAR_COEFFICIENT: f64 = 10.0;

/// Identical rotors in one group.
pub const MAX_ROTOR_COUNT: u32 = 1000;

/// Characters in a name (vehicle, component, scenario).
pub const MAX_NAME_CHARS: usize = 200;

/// Points of a scenario's speed sweep.
pub const MAX_SWEEP_POINTS: usize = 100_000;

/// Points along one axis of the corridor grid.
pub const MAX_GRID_AXIS: usize = 100_000;

/// Points of the whole corridor grid.
pub const MAX_GRID_POINTS: usize = 1_000_000;

/// Cells of the schedule optimiser's table (knots x values x values).
pub const MAX_SCHEDULE_CELLS: usize = 20_000_000;

/// Samples of a recorded flight time history.
pub const MAX_FLIGHT_SAMPLES: usize = 1_000_000;

/// Bytes read from one input file (vehicle, scenario, schedule, polar table).
pub const MAX_FILE_BYTES: u64 = 4 * 1024 * 1024;

/// An upper bound on the number of points `lo, lo + step, ..., hi` (the end included),
/// computed in floating point so that a tiny step or a huge range gives a huge number instead
/// of wrapping; infinite when the inputs give no finite count (a non-finite value, a step
/// that is not positive, hi below lo). Compare it with a limit before allocating.
pub fn point_count(lo: f64, hi: f64, step: f64) -> f64 {
    if !(lo.is_finite() && hi.is_finite() && step.is_finite() && step > 0.0 && hi >= lo) {
        return f64::INFINITY;
    }
    ((hi - lo) / step).floor() + 2.0
}

/// What is wrong with a name (vehicle, component, scenario), if anything: longer than
/// [`MAX_NAME_CHARS`], a control character, or a first character that a spreadsheet reads as
/// a formula (`=`, `+`, `-`, `@`, the OWASP guidance on CSV injection).
pub fn name_problem(name: &str) -> Option<String> {
    let n = name.chars().count();
    if n > MAX_NAME_CHARS {
        return Some(format!(
            "name has {n} characters (at most {MAX_NAME_CHARS})"
        ));
    }
    if name.chars().any(char::is_control) {
        return Some("name holds a control character (tab, newline, ...)".into());
    }
    if name.starts_with(['=', '+', '-', '@']) {
        return Some(format!(
            "name starts with '{}', which a spreadsheet reads as a formula",
            &name[..1]
        ));
    }
    None
}

/// The hint for a [`name_problem`].
pub const NAME_HINT: &str =
    "give a short name of letters, digits, spaces and - _ . ( ), starting with a letter or digit";

/// A number for a message: plain when it reads well, in exponent form when it is huge or
/// tiny (1e308 prints as `1e308`, not as 309 digits).
pub fn show(v: f64) -> String {
    if v == 0.0 || !v.is_finite() || (1e-4..1e7).contains(&v.abs()) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_do_not_wrap() {
        // Common practice, no source: the end point adds one, a remainder one more.
        assert_eq!(point_count(0.0, 10.0, 1.0), 12.0);
        assert_eq!(point_count(0.0, 1e308, 1e-308), f64::INFINITY);
        assert!(point_count(0.0, 30.0, 1e-308) > 1e300);
        assert_eq!(point_count(0.0, 30.0, 0.0), f64::INFINITY);
        assert_eq!(point_count(0.0, f64::NAN, 1.0), f64::INFINITY);
    }

    #[test]
    fn bounds_refuse_non_finite_values() {
        // Common practice, no source.
        assert!(MASS_KG.contains(25.0));
        assert!(!MASS_KG.contains(1e-200));
        assert!(!MASS_KG.contains(f64::NAN));
        assert_eq!(MASS_KG.text(), "0.01..100000 kg");
        assert_eq!(show(1e308), "1e308");
        assert_eq!(show(25.5), "25.5");
        assert!(name_problem("=HYPERLINK(\"x\")").is_some());
        assert!(name_problem(&"a".repeat(201)).is_some());
        assert!(name_problem("wing-props").is_none());
    }
}
