//! Checks of the atmosphere model against the standard atmosphere tables.

use hoverline::atmosphere::{isa, Atmosphere, AtmosphereError, G0_MPS2, R_AIR_J_KG_K};

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

#[test]
fn troposphere_matches_the_standard_atmosphere_table() {
    // Source: ICAO Doc 7488/3 / US Standard Atmosphere 1976 (identical below 32 km), values in
    // geopotential altitude as tabulated in CHECK-VALUES §1. Tolerances from there: 1e-4 relative
    // on p and rho, 0.01 K, 0.01 m/s; 1e-4 on rho separates geopotential from geometric altitude
    // (the geometric-altitude density at 5 km differs by 4e-4).
    let table = [
        // (H m, T K, p Pa, rho kg/m3, a m/s)
        (0.0, 288.15, 101_325.0, 1.22500, 340.294),
        (1000.0, 281.65, 89_874.6, 1.11164, 336.434),
        (2000.0, 275.15, 79_495.2, 1.00649, 332.529),
        (3000.0, 268.65, 70_108.5, 0.90912, 328.578),
        (5000.0, 255.65, 54_019.9, 0.73612, 320.529),
    ];
    for (h, t, p, rho, a) in table {
        let atm = isa(h, 0.0).unwrap();
        assert!(
            (atm.temperature_k - t).abs() < 0.01,
            "T at {h} m: {}",
            atm.temperature_k
        );
        assert!(
            rel(atm.pressure_pa, p) < 1e-4,
            "p at {h} m: {}",
            atm.pressure_pa
        );
        assert!(
            rel(atm.density_kg_m3, rho) < 1e-4,
            "rho at {h} m: {}",
            atm.density_kg_m3
        );
        assert!(
            (atm.speed_of_sound_mps - a).abs() < 0.01,
            "a at {h} m: {}",
            atm.speed_of_sound_mps
        );
    }
}

#[test]
fn five_km_is_not_the_geometric_altitude_value() {
    // Source: US Standard Atmosphere 1976 printed (geometric-altitude) table, 5000 m:
    // rho = 0.73643 kg/m3 (digits from memory; CHECK-VALUES §1). A geopotential model must differ
    // from it by more than the 1e-4 tolerance used above.
    let atm = isa(5000.0, 0.0).unwrap();
    assert!(rel(atm.density_kg_m3, 0.73643) > 3e-4);
}

#[test]
fn tropopause_checkpoint() {
    // Source: ICAO Doc 7488/3 values at 11 km, quoted in CHECK-VALUES §1:
    // T = 216.65 K, p = 22632.1 Pa, rho = 0.363918 kg/m3.
    let atm = isa(11_000.0, 0.0).unwrap();
    assert!((atm.temperature_k - 216.65).abs() < 0.01);
    assert!(rel(atm.pressure_pa, 22_632.1) < 1e-5, "{}", atm.pressure_pa);
    assert!(
        rel(atm.density_kg_m3, 0.363918) < 1e-5,
        "{}",
        atm.density_kg_m3
    );
}

#[test]
fn sea_level_constants() {
    // Source: ICAO Doc 7488/3 defining constants (CHECK-VALUES §1): rho0 = 1.225 kg/m3,
    // a0 = 340.294 m/s, R = 287.05287 J/(kg K), g0 = 9.80665 m/s2.
    let sl = Atmosphere::sea_level();
    assert_eq!(sl, isa(0.0, 0.0).unwrap());
    assert!(rel(sl.density_kg_m3, 1.225) < 1e-6);
    assert!((sl.speed_of_sound_mps - 340.294).abs() < 0.001);
    assert_eq!(R_AIR_J_KG_K, 287.05287);
    assert_eq!(G0_MPS2, 9.80665);
}

#[test]
fn hot_day_keeps_pressure_and_uses_the_gas_law() {
    // Source: ISA + dT definition (pressure as ISA at the altitude, T raised by dT, rho = p/(R T)),
    // CHECK-VALUES §1; numbers derived here from those formulas (D):
    // ISA+15 at 0 m: T 303.15 K, rho 1.164386 kg/m3, a 349.0388 m/s;
    // ISA+15 at 2000 m: T 290.15 K, p 79495.2 Pa, rho 0.954457 kg/m3;
    // ISA-20 at 1000 m: T 261.65 K, rho 1.196614 kg/m3.
    let cases = [
        (0.0, 15.0, 303.15, 101_325.0, 1.164_386),
        (2000.0, 15.0, 290.15, 79_495.2, 0.954_457),
        (1000.0, -20.0, 261.65, 89_874.6, 1.196_614),
    ];
    for (h, dt, t, p, rho) in cases {
        let atm = isa(h, dt).unwrap();
        let std = isa(h, 0.0).unwrap();
        assert!((atm.temperature_k - t).abs() < 0.01);
        assert_eq!(atm.pressure_pa, std.pressure_pa, "offset must not change p");
        assert!(rel(atm.pressure_pa, p) < 1e-4);
        assert!(
            rel(atm.density_kg_m3, rho) < 1e-5,
            "rho {h} m ISA{dt:+}: {}",
            atm.density_kg_m3
        );
        assert!(
            rel(
                atm.density_kg_m3,
                atm.pressure_pa / (R_AIR_J_KG_K * atm.temperature_k)
            ) < 1e-12
        );
        assert_eq!(atm.temperature_offset_k, dt);
    }
    let hot = isa(0.0, 15.0).unwrap();
    assert!((hot.speed_of_sound_mps - 349.0388).abs() < 0.001);
}

#[test]
fn sea_level_viscosity() {
    // Source: US Standard Atmosphere 1976, Table I at 0 m: mu = 1.7894e-5 Pa s,
    // nu = 1.4607e-5 m2/s (from memory); Sutherland constants beta = 1.458e-6, S = 110.4 K.
    let sl = Atmosphere::sea_level();
    assert!(
        rel(sl.dynamic_viscosity_pa_s, 1.7894e-5) < 1e-4,
        "{}",
        sl.dynamic_viscosity_pa_s
    );
    assert!(
        rel(sl.kinematic_viscosity_m2_s, 1.4607e-5) < 1e-4,
        "{}",
        sl.kinematic_viscosity_m2_s
    );
    // Viscosity falls with temperature (gases): colder air higher up is less viscous.
    assert!(isa(5000.0, 0.0).unwrap().dynamic_viscosity_pa_s < sl.dynamic_viscosity_pa_s);
    // Reynolds number of a 0.3 m chord at 20 m/s at sea level: V c / nu = 4.107e5 (D).
    assert!(rel(sl.reynolds_number(20.0, 0.3), 20.0 * 0.3 / 1.4607e-5) < 1e-4);
    assert!(rel(sl.mach_number(34.0294), 0.1) < 1e-6);
}

#[test]
fn out_of_range_and_bad_inputs_are_errors() {
    assert!(matches!(
        isa(11_000.1, 0.0),
        Err(AtmosphereError::AltitudeOutOfRange { .. })
    ));
    assert!(matches!(
        isa(-500.1, 0.0),
        Err(AtmosphereError::AltitudeOutOfRange { .. })
    ));
    assert!(isa(-500.0, 0.0).is_ok());
    assert!(matches!(
        isa(f64::NAN, 0.0),
        Err(AtmosphereError::NonFinite {
            name: "altitude_m",
            ..
        })
    ));
    assert!(matches!(
        isa(0.0, f64::INFINITY),
        Err(AtmosphereError::NonFinite {
            name: "temperature_offset_k",
            ..
        })
    ));
    // 288.15 - 140 = 148.15 K <= 150 K.
    let e = isa(0.0, -140.0).unwrap_err();
    assert!(matches!(e, AtmosphereError::TemperatureTooLow { .. }));
    let msg = e.to_string();
    assert!(
        msg.contains("hint:") && msg.starts_with("temperature"),
        "{msg}"
    );
    assert!(isa(0.0, -138.0).is_ok());
    let msg = isa(20_000.0, 0.0).unwrap_err().to_string();
    assert!(msg.contains("20000") && msg.contains("hint:"), "{msg}");
}
