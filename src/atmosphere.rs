//! International Standard Atmosphere, troposphere only, with a temperature offset.
//!
//! Model: ISA (ICAO Doc 7488/3 = ISO 2533; identical to the US Standard Atmosphere 1976 below
//! 32 km) in geopotential altitude H from -500 m to 11 000 m (the tropopause):
//!
//! - T_isa = T0 + L H, with T0 = 288.15 K and L = -0.0065 K/m;
//! - p = p0 (T_isa / T0)^(-g0 / (R L)), with p0 = 101 325 Pa (exponent 5.25588);
//! - ISA + dT ("hot/cold day"): the pressure stays the ISA pressure at that altitude, the
//!   temperature becomes T = T_isa + dT, and the density follows from the gas law rho = p / (R T);
//! - speed of sound a = sqrt(gamma R T), gamma = 1.4;
//! - dynamic viscosity by Sutherland's law mu = beta T^1.5 / (T + S), with the US 1976 constants
//!   beta = 1.458e-6 kg/(m s K^0.5) and S = 110.4 K; kinematic viscosity nu = mu / rho.
//!
//! Altitudes are geopotential; a caller holding geometric altitude Z converts it first with
//! H = r0 Z / (r0 + Z), r0 = 6 356 766 m (the difference is 4e-4 in pressure at 5 km).

use serde::Serialize;

/// Standard acceleration of gravity, m/s^2 (ISA defining constant).
pub const G0_MPS2: f64 = 9.80665;
/// Specific gas constant of dry air, J/(kg K) (ISA defining constant).
pub const R_AIR_J_KG_K: f64 = 287.05287;

/// Sea-level standard temperature, K.
const T0_K: f64 = 288.15;
/// Sea-level standard pressure, Pa.
const P0_PA: f64 = 101_325.0;
/// Troposphere temperature lapse rate dT/dH, K/m (negative: cooler with height).
const LAPSE_K_M: f64 = -0.0065;
/// Ratio of specific heats of air.
const GAMMA_AIR: f64 = 1.4;
/// Sutherland coefficient beta, kg/(m s K^0.5) (US Standard Atmosphere 1976).
const SUTHERLAND_BETA: f64 = 1.458e-6;
/// Sutherland temperature S, K (US Standard Atmosphere 1976).
const SUTHERLAND_S_K: f64 = 110.4;

/// Lowest geopotential altitude accepted, m.
pub const MIN_ALTITUDE_M: f64 = -500.0;
/// Highest geopotential altitude accepted (the tropopause), m.
pub const MAX_ALTITUDE_M: f64 = 11_000.0;
/// Resulting air temperatures at or below this are rejected, K.
pub const MIN_TEMPERATURE_K: f64 = 150.0;

/// State of the air at one altitude; all SI.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Atmosphere {
    /// Geopotential altitude, m.
    pub altitude_m: f64,
    /// Offset added to the ISA temperature (ISA + dT), K.
    pub temperature_offset_k: f64,
    /// Static air temperature, K (ISA value plus the offset).
    pub temperature_k: f64,
    /// Static pressure, Pa (the ISA value; the offset does not change it).
    pub pressure_pa: f64,
    /// Density, kg/m^3, from the gas law rho = p / (R T).
    pub density_kg_m3: f64,
    /// Speed of sound, m/s, a = sqrt(1.4 R T).
    pub speed_of_sound_mps: f64,
    /// Dynamic viscosity, Pa s (Sutherland's law).
    pub dynamic_viscosity_pa_s: f64,
    /// Kinematic viscosity, m^2/s (mu / rho).
    pub kinematic_viscosity_m2_s: f64,
}

/// Why an atmosphere could not be computed.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum AtmosphereError {
    /// An input was NaN or infinite.
    #[error("{name} is not a finite number ({value}); hint: give a finite value")]
    NonFinite {
        /// Name of the input, with its unit suffix.
        name: &'static str,
        /// The value given.
        value: f64,
    },
    /// The altitude lies outside the modelled troposphere.
    #[error(
        "altitude {altitude_m} m is outside the modelled range -500..11000 m (ISA troposphere); \
         hint: use a geopotential altitude between -500 and 11000 m"
    )]
    AltitudeOutOfRange {
        /// The altitude given, m.
        altitude_m: f64,
    },
    /// The temperature offset makes the air implausibly cold.
    #[error(
        "temperature {temperature_k} K (ISA {isa_temperature_k} K plus offset {temperature_offset_k} K) \
         is at or below 150 K; hint: check the sign and size of the temperature offset"
    )]
    TemperatureTooLow {
        /// The resulting temperature, K.
        temperature_k: f64,
        /// The ISA temperature at the altitude, K.
        isa_temperature_k: f64,
        /// The offset given, K.
        temperature_offset_k: f64,
    },
}

/// ISA troposphere (geopotential altitude -500..11000 m) with a temperature offset (ISA+dT: pressure
/// as ISA at that altitude, temperature raised by dT, density from the gas law). Sutherland viscosity.
///
/// `altitude_m` is geopotential altitude in m, `temperature_offset_k` the offset dT in K (positive
/// for a hot day). Errors for an altitude outside -500..=11000 m, non-finite inputs, or a resulting
/// temperature <= 150 K.
pub fn isa(altitude_m: f64, temperature_offset_k: f64) -> Result<Atmosphere, AtmosphereError> {
    if !altitude_m.is_finite() {
        return Err(AtmosphereError::NonFinite {
            name: "altitude_m",
            value: altitude_m,
        });
    }
    if !temperature_offset_k.is_finite() {
        return Err(AtmosphereError::NonFinite {
            name: "temperature_offset_k",
            value: temperature_offset_k,
        });
    }
    if !(MIN_ALTITUDE_M..=MAX_ALTITUDE_M).contains(&altitude_m) {
        return Err(AtmosphereError::AltitudeOutOfRange { altitude_m });
    }
    let isa_temperature_k = T0_K + LAPSE_K_M * altitude_m;
    let temperature_k = isa_temperature_k + temperature_offset_k;
    if temperature_k <= MIN_TEMPERATURE_K {
        return Err(AtmosphereError::TemperatureTooLow {
            temperature_k,
            isa_temperature_k,
            temperature_offset_k,
        });
    }
    Ok(troposphere(altitude_m, temperature_offset_k))
}

/// Evaluates the model for inputs already known to be valid.
fn troposphere(altitude_m: f64, temperature_offset_k: f64) -> Atmosphere {
    let isa_temperature_k = T0_K + LAPSE_K_M * altitude_m;
    // Hydrostatic equation with a linear lapse: p/p0 = (T/T0)^(-g0/(R L)).
    let exponent = -G0_MPS2 / (R_AIR_J_KG_K * LAPSE_K_M);
    let pressure_pa = P0_PA * (isa_temperature_k / T0_K).powf(exponent);
    let temperature_k = isa_temperature_k + temperature_offset_k;
    let density_kg_m3 = pressure_pa / (R_AIR_J_KG_K * temperature_k);
    let speed_of_sound_mps = (GAMMA_AIR * R_AIR_J_KG_K * temperature_k).sqrt();
    let dynamic_viscosity_pa_s =
        SUTHERLAND_BETA * temperature_k.powf(1.5) / (temperature_k + SUTHERLAND_S_K);
    Atmosphere {
        altitude_m,
        temperature_offset_k,
        temperature_k,
        pressure_pa,
        density_kg_m3,
        speed_of_sound_mps,
        dynamic_viscosity_pa_s,
        kinematic_viscosity_m2_s: dynamic_viscosity_pa_s / density_kg_m3,
    }
}

impl Atmosphere {
    /// ISA sea level (0 m, no temperature offset): 288.15 K, 101 325 Pa, 1.225 kg/m^3.
    pub fn sea_level() -> Atmosphere {
        troposphere(0.0, 0.0)
    }

    /// Reynolds number V L / nu for a speed in m/s and a reference length in m (dimensionless).
    pub fn reynolds_number(&self, speed_mps: f64, length_m: f64) -> f64 {
        speed_mps * length_m / self.kinematic_viscosity_m2_s
    }

    /// Mach number V / a for a speed in m/s (dimensionless).
    pub fn mach_number(&self, speed_mps: f64) -> f64 {
        speed_mps / self.speed_of_sound_mps
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pressure_exponent_is_the_published_value() {
        // Source: ICAO Doc 7488/3 (restated in CHECK-VALUES §1): g0/(R |L|) = 5.25588.
        let exponent = -G0_MPS2 / (R_AIR_J_KG_K * LAPSE_K_M);
        assert!((exponent - 5.25588).abs() < 5e-6, "{exponent}");
    }

    #[test]
    fn sea_level_matches_isa_at_zero() {
        assert_eq!(Atmosphere::sea_level(), isa(0.0, 0.0).unwrap());
    }

    #[test]
    fn range_ends_are_accepted() {
        assert!(isa(MIN_ALTITUDE_M, 0.0).is_ok());
        assert!(isa(MAX_ALTITUDE_M, 0.0).is_ok());
    }
}
