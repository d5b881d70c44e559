//! Breakdown criteria against the published formulas, constants and check values of
//! docs/references.md (the check-value table rows are named "row N"). Each test names its source;
//! "from memory" and "common practice" say so where docs/references.md marks a value [M] or [P].

use holdoff::breakdown::convert::{
    self, ATM_PA, BAR_PA, T0_K, TORR_CM_PA_M, TORR_PA, pa_m_to_torr_cm, torr_cm_to_pa_m,
};
use holdoff::breakdown::corona::{self, PeekGeometry};
use holdoff::breakdown::gas::{self, GasOptions, pure, standard_air};
use holdoff::breakdown::ionisation::EffectiveIonisation;
use holdoff::breakdown::paschen::{self, AIR, N2};
use holdoff::breakdown::vacuum::{self, KilpatrickForm};
use holdoff::breakdown::{Criterion, LimitKind, Validity, insulator, streamer, uniform};

/// Relative difference |a − b| / |b|.
fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn assert_rel(what: &str, got: f64, expected: f64, tol: f64) {
    assert!(
        rel(got, expected) <= tol,
        "{what}: got {got}, expected {expected} within {tol} (relative {:.3e})",
        rel(got, expected)
    );
}

fn sf6(p_pa: f64) -> holdoff::model::Gas {
    pure("SF6", p_pa, T0_K)
}

// --- §1 Paschen's law (Lieberman & Lichtenberg 2005 Ch. 14 formula; Raizer Table 4.1 constants)

#[test]
fn row_01_02_air_paschen_minimum() {
    // docs/references.md row 1-2 [D]: Raizer A = 15, B = 365 (from memory; also confirmed in a
    // public HV note), gamma = 0.01: (pd)min = 0.8363 Torr·cm, Vmin = 305.3 V, 0.1 %.
    let m = paschen::minimum(&AIR, 0.01).unwrap();
    assert_rel("(pd)min", pa_m_to_torr_cm(m.pd_pa_m), 0.8363, 1e-3);
    assert_rel("Vmin", m.voltage_v, 305.3, 1e-3);
}

#[test]
fn row_03_n2_paschen_minimum() {
    // Row 3 [D]: N2 A = 12, B = 342 (Raizer Table 4.1, from memory), gamma = 0.01.
    let m = paschen::minimum(&N2, 0.01).unwrap();
    assert_rel("Vmin", m.voltage_v, 357.5, 1e-3);
    assert_rel("(pd)min", pa_m_to_torr_cm(m.pd_pa_m), 1.0454, 1e-3);
}

/// The lowest voltage of the Paschen curve found by scanning pd (a construction independent of
/// the closed-form minimum): 2000 log-spaced points over 0.05–50 Torr·cm, V and pd at the least.
fn scanned_minimum(c: &paschen::PaschenConstants) -> (f64, f64) {
    let mut best = (f64::INFINITY, 0.0);
    for i in 0..2000 {
        let pd = torr_cm_to_pa_m(0.05 * 1000f64.powf(i as f64 / 1999.0));
        if let Ok(p) = paschen::voltage_at_pd(c, pd, 0.01)
            && p.voltage_v < best.0
        {
            best = (p.voltage_v, pd);
        }
    }
    best
}

#[test]
fn paschen_minimum_of_each_gas_is_within_15_percent_of_the_measured_one() {
    // Measured minimum sparking potentials, Naidu & Kamaraju, High Voltage Engineering, Ch. 2
    // table (from memory; air 327 V also confirmed in a public HV article): air 327 V, N2 251 V,
    // CO2 420 V (docs/references.md §1). The breakdown curve of each gas (air: Raizer A = 15,
    // B = 365; N2 and CO2: anchored on the measured minima, docs/references.md §16), gamma =
    // 0.01, scanned over pd, must have its least voltage within 15 % of the measured one.
    use holdoff::breakdown::GasKind;
    for (kind, name) in [
        (GasKind::Air, "air"),
        (GasKind::N2, "N2"),
        (GasKind::Co2, "CO2"),
    ] {
        let c = paschen::constants_for(kind).unwrap();
        let measured = paschen::measured_minimum(name).unwrap();
        let (v, pd) = scanned_minimum(c);
        assert_rel(&format!("{name} Vmin"), v, measured.v_min_v, 0.15);
        // The closed form agrees with the scan (0.1 %), and the minimum is inside the window.
        let m = paschen::minimum(c, 0.01).unwrap();
        assert_rel(&format!("{name} closed form"), m.voltage_v, v, 1e-3);
        assert_rel(&format!("{name} (pd)min"), m.pd_pa_m, pd, 0.01);
        assert!(m.validity.is_valid(), "{name}: {:?}", m.validity);
    }
    // The published N2 and CO2 alpha fits (Raizer Table 4.1, from memory) miss the minima by
    // more than 15 % at gamma = 0.01 (357 V and 292 V): the reason for the anchored curves.
    for (c, measured) in [(&N2, 251.0), (&paschen::CO2, 420.0)] {
        assert!(rel(paschen::minimum(c, 0.01).unwrap().voltage_v, measured) > 0.15);
    }
}

#[test]
fn row_04_air_paschen_at_10_torr_cm() {
    // Row 4 [D]: 1048.5 V at pd = 10 Torr·cm, 0.1 %; E/p = 104.9 V/(cm·Torr), inside 100-800.
    let p = paschen::voltage_at_pd(&AIR, torr_cm_to_pa_m(10.0), 0.01).unwrap();
    assert_rel("V", p.voltage_v, 1048.5, 1e-3);
    assert!(p.validity.is_valid());
}

#[test]
fn row_05_air_paschen_at_one_atmosphere_cm_is_flagged() {
    // Row 5 [D]: pd = 760 Torr·cm gives 35.51 kV with a validity warning (E/p = 46.7 < 100).
    // 1 cm of air at 1 atm, 20 °C is exactly 760 Torr·cm at the reference density.
    let l = paschen::limit(&standard_air(), 0.01, &GasOptions::default()).unwrap();
    assert_eq!(l.criterion, Criterion::Paschen);
    assert_eq!(l.kind, LimitKind::Voltage);
    assert_rel("V", l.value, 35.51e3, 1e-3);
    match &l.validity {
        Validity::OutsideValidity { reason } => {
            assert!(reason.contains("46.7"), "reason: {reason}");
            assert!(reason.contains("100-800"), "reason: {reason}");
        }
        Validity::Valid => panic!("Paschen at 760 Torr·cm must be flagged"),
    }
}

#[test]
fn row_06_measured_air_minimum() {
    // Row 6: Naidu & Kamaraju, High Voltage Engineering, Ch. 2 table (from memory); 327 V and
    // 7.5 um at 1 atm confirmed in a public HV engineering article. Exact table lookup.
    let m = paschen::measured_minimum("air").unwrap();
    assert_eq!(m.v_min_v, 327.0);
    assert_rel("(pd)min", pa_m_to_torr_cm(m.pd_min_pa_m), 0.567, 1e-12);
}

#[test]
fn paschen_formula_is_within_ten_percent_of_the_measured_air_minimum() {
    // The analytic minimum (Raizer constants, gamma = 0.01) against the measured 327 V
    // (Naidu & Kamaraju Ch. 2, from memory / confirmed): docs/references.md §1 says the formula does
    // not reproduce it exactly; 10 % is the agreement asked of it.
    let formula = paschen::minimum(&AIR, 0.01).unwrap().voltage_v;
    let measured = paschen::measured_minimum("air").unwrap().v_min_v;
    assert!(rel(formula, measured) < 0.10, "{formula} vs {measured}");
}

#[test]
fn row_07_unit_conversion() {
    // Row 7 (docs/references.md unit conventions): 1 Torr·cm = 1.33322 Pa·m = 0.013332 bar·mm, 1e-5.
    assert!((TORR_CM_PA_M - 1.33322).abs() < 1e-5);
    assert!((convert::pa_m_to_bar_mm(TORR_CM_PA_M) - 0.013332).abs() < 1e-5);
}

#[test]
fn row_08_air_constants_in_si() {
    // Row 8 [D]: A = 11.25 /(Pa·m), B = 273.8 V/(Pa·m), 0.1 %.
    assert_rel("A", AIR.a_per_pa_m, 11.25, 1e-3);
    assert_rel("B", AIR.b_v_per_pa_m, 273.8, 1e-3);
}

// --- §2 uniform-field air (Kuffel, Zaengl & Kuffel 2000 Ch. 5, Schumann-type fit, from memory)

#[test]
fn row_09_schumann_one_atmosphere_one_cm() {
    // Row 9: 31.45 kV (formula, 0.1 %); against the IEC 60052 sphere-gap values 31.2-32.0 kV
    // (as reproduced in a public sphere-gap note), 3 %.
    let (v, validity) = uniform::schumann_air_voltage(ATM_PA, 0.01).unwrap();
    assert_rel("Schumann", v, 31.45e3, 1e-3);
    assert!(validity.is_valid());
    assert!(rel(v, 31.2e3) <= 0.03 && rel(v, 32.0e3) <= 0.03);
}

#[test]
fn row_10_schumann_one_bar() {
    // Row 10 [D]: p = 1 bar, d = 0.5 / 2 / 10 cm: 16.93 / 58.22 / 264.85 kV, 0.1 %.
    for (d_cm, kv) in [(0.5, 16.93), (2.0, 58.22), (10.0, 264.85)] {
        let (v, _) = uniform::schumann_air_voltage(BAR_PA, d_cm / 100.0).unwrap();
        assert_rel(&format!("{d_cm} cm"), v, kv * 1e3, 1e-3);
    }
}

#[test]
fn row_11_older_air_form() {
    // Row 11 [C]: a public HV note citing Naidu & Kamaraju: 760 Torr, 1 cm, 293 K: 30.30 kV.
    let v = uniform::air_older_form_voltage(760.0 * TORR_PA, 293.0, 0.01).unwrap();
    assert_rel("older form", v, 30.30e3, 1e-3);
}

#[test]
fn row_12_relative_air_density() {
    // Row 12 [D]: IEC 60060-1 reference atmosphere (from memory): 95 kPa, 30 °C: 0.9069, 1e-4.
    let d = gas::relative_air_density(95.0e3, 303.15).unwrap();
    assert!((d - 0.9069).abs() < 1e-4, "{d}");
}

#[test]
fn one_cm_air_at_one_atmosphere_picks_schumann() {
    // Regime chooser: Fink & Beatty handbook 1 cm -> 31.4 kV peak; Peek (5 cm spheres) 31.8 kV;
    // IEC 60052 sphere gaps 31.2-32.0 kV (docs/references.md §2, [C] secondary). 3 %.
    let r = uniform::uniform_breakdown(&standard_air(), 0.01, &GasOptions::default()).unwrap();
    assert_eq!(r.voltage.criterion, Criterion::SchumannAir);
    assert!(r.voltage.validity.is_valid());
    assert!(rel(r.voltage.value, 31.4e3) <= 0.03);
    assert!(rel(r.voltage.value, 31.8e3) <= 0.03);
    // Paschen was considered and flagged (E/p = 46.7 < 100 V/(cm·Torr)).
    let paschen = r
        .considered
        .iter()
        .find(|l| l.criterion == Criterion::Paschen)
        .unwrap();
    assert!(!paschen.validity.is_valid());
}

#[test]
fn n2_one_cm_against_the_measured_value() {
    // Nitrogen, 1 cm at 101.3 kPa: ~30.4 kV (Taylor & Francis chapter abstract, [C]). The
    // scaled-air N2 factor 0.97 is derived from this point, so this checks the wiring, 1 %.
    let r = uniform::uniform_breakdown(&pure("N2", 101.3e3, T0_K), 0.01, &GasOptions::default())
        .unwrap();
    assert_eq!(r.voltage.criterion, Criterion::ScaledAir);
    assert_rel("N2", r.voltage.value, 30.4e3, 0.01);
}

// --- §3 SF6 (Christophorou & Olthoff 2000, from memory; Kuffel et al. 2000 Ch. 5, from memory)

#[test]
fn row_13_sf6_critical_field() {
    // Row 13 [D]: 361 Td at 1 bar, 20 °C: 89.19 kV/cm, 0.1 %.
    let l = uniform::critical_field(&sf6(BAR_PA), &GasOptions::default()).unwrap();
    assert_eq!(l.kind, LimitKind::Field);
    assert_rel("Ecrit", l.value, 89.19e5, 1e-3);
}

#[test]
fn row_14_15_sf6_uniform_gap() {
    // Rows 14-15 [D]: k = 27.7 /kV, (E/p)crit = 88.5 kV/(cm·bar), K = 10.5: 1 cm at 1 bar
    // 88.88 kV, at 5 bar 442.9 kV, 0.1 %.
    let opts = GasOptions::default();
    let v1 = uniform::sf6_limit(&sf6(BAR_PA), 0.01, &opts).unwrap();
    let v5 = uniform::sf6_limit(&sf6(5.0 * BAR_PA), 0.01, &opts).unwrap();
    assert_rel("1 bar", v1.value, 88.88e3, 1e-3);
    assert_rel("5 bar", v5.value, 442.9e3, 1e-3);
    assert!(v1.validity.is_valid() && v5.validity.is_valid());
}

#[test]
fn sf6_ten_mm_is_close_to_the_critical_field_value() {
    // The uniform 10 mm gap at 1 and 5 bar against Ecrit·d from 361 Td (≈ 89 kV/(cm·bar)), 3 %.
    let opts = GasOptions::default();
    for p_bar in [1.0, 5.0] {
        let g = sf6(p_bar * BAR_PA);
        let r = uniform::uniform_breakdown(&g, 0.01, &opts).unwrap();
        assert_eq!(r.voltage.criterion, Criterion::Sf6Streamer);
        let crit = uniform::critical_field(&g, &opts).unwrap().value * 0.01;
        assert!(
            rel(r.voltage.value, crit) < 0.03,
            "{p_bar} bar: {} vs {crit}",
            r.voltage.value
        );
    }
}

// --- §4 streamer integral (Raether–Meek; Kuffel et al. 2000 fits, from memory)

fn uniform_profile(e: f64, d: f64, n: usize) -> Vec<(f64, f64)> {
    (0..=n).map(|i| (d * i as f64 / n as f64, e)).collect()
}

#[test]
fn streamer_integral_reproduces_uniform_breakdown() {
    // A uniform profile at unit field: the inception factor is the breakdown field. Compared
    // with the regime chooser for the same gas and gap, 10 %.
    let opts = GasOptions::default();
    let d = 0.01;
    for gas in [standard_air(), sf6(BAR_PA), sf6(5.0 * BAR_PA)] {
        let inc = streamer::inception_default(&uniform_profile(1.0, d, 20), &gas, &opts).unwrap();
        let chosen = uniform::uniform_breakdown(&gas, d, &opts).unwrap();
        assert!(
            rel(inc.factor * d, chosen.voltage.value) < 0.10,
            "{}: streamer {} vs uniform {}",
            gas.species,
            inc.factor * d,
            chosen.voltage.value
        );
        assert!(inc.integral.validity.is_valid());
    }
}

/// Field-line profile of a coaxial gap at 1 V: E(s) = 1/((a + s) ln(b/a)), s from the inner
/// conductor (docs/references.md §10 coaxial field).
fn coax_profile(a: f64, b: f64, n: usize) -> Vec<(f64, f64)> {
    let l = (b / a).ln();
    (0..=n)
        .map(|i| {
            let s = (b - a) * i as f64 / n as f64;
            (s, 1.0 / ((a + s) * l))
        })
        .collect()
}

#[test]
fn row_16_sf6_coax_inception() {
    // Row 16 [D]: a = 1 cm, b = 5 cm, 1 bar, K = 10.5, k = 27.7 /kV, (E/p)crit = 88.5:
    // V_inc = 155.8 kV, E_max = 96.8 kV/cm, 0.2 %.
    let inc = streamer::inception(
        &coax_profile(0.01, 0.05, 4000),
        &sf6(BAR_PA),
        &EffectiveIonisation::sf6(),
    )
    .unwrap();
    assert_rel("V_inc", inc.factor, 155.8e3, 2e-3);
    assert_rel("E_max", inc.surface_field_v_per_m, 96.8e5, 2e-3);
    assert_eq!(inc.integral.stop, streamer::StopReason::CoefficientZero);
    assert!(inc.integral.validity.is_valid());
    let l = inc.voltage_limit(1.0);
    assert_eq!(l.criterion, Criterion::StreamerIntegral);
    assert_rel("limit", l.value, 155.8e3, 2e-3);
}

#[test]
fn row_17_sf6_coax_inception_five_bar() {
    // Row 17 [D]: a = 5 cm, b = 15 cm, 5 bar: V_inc = 2476 kV, E_max = 450.7 kV/cm, 0.2 %.
    let inc = streamer::inception(
        &coax_profile(0.05, 0.15, 4000),
        &sf6(5.0 * BAR_PA),
        &EffectiveIonisation::sf6(),
    )
    .unwrap();
    assert_rel("V_inc", inc.factor, 2476e3, 2e-3);
    assert_rel("E_max", inc.surface_field_v_per_m, 450.7e5, 2e-3);
}

// --- §5 Peek (Peek 1929; parallel wires confirmed, coaxial and sphere from memory)

#[test]
fn row_18_peek_coaxial_field() {
    // Row 18: coaxial, r = 1 cm, delta = m = 1: 40.55 kV/cm, 0.1 % (from memory).
    let l = corona::onset_field(PeekGeometry::Coaxial, 0.01, 1.0, 1.0).unwrap();
    assert_rel("Ec", l.value, 40.55e5, 1e-3);
}

#[test]
fn row_19_peek_coaxial_voltage() {
    // Row 19 [D]: a = 1 cm, b = 10 cm: 93.37 kV, 0.1 %.
    let l = corona::coaxial_onset_voltage(0.01, 0.10, 1.0, 1.0).unwrap();
    assert_eq!(l.kind, LimitKind::Voltage);
    assert_rel("V", l.value, 93.37e3, 1e-3);
}

#[test]
fn row_20_peek_parallel_wires() {
    // Row 20 [C]: parallel wires, r = 0.5 cm: 42.77 kV/cm, 0.1 %.
    let l = corona::onset_field(PeekGeometry::ParallelWires, 0.005, 1.0, 1.0).unwrap();
    assert_rel("Ec", l.value, 42.77e5, 1e-3);
}

#[test]
fn row_21_peek_sphere() {
    // Row 21: sphere, r = 1 cm: 41.89 kV/cm, 0.1 % (from memory).
    let l = corona::onset_field(PeekGeometry::Sphere, 0.01, 1.0, 1.0).unwrap();
    assert_rel("Ec", l.value, 41.89e5, 1e-3);
}

// --- §6 vacuum

#[test]
fn row_38_cranberg() {
    // Row 38: Cranberg, J. Appl. Phys. 23, 518 (1952); C = 1e13 V²/m (from memory), d = 0.1 m:
    // 1.0 MV, E = 10 MV/m, exact (to rounding).
    let v = vacuum::cranberg_gap_voltage(0.1, vacuum::CRANBERG_C_DEFAULT).unwrap();
    assert_rel("V", v.value, 1.0e6, 1e-14);
    assert!(v.validity.is_valid());
    let e = vacuum::cranberg_field_limit(v.value, vacuum::CRANBERG_C_DEFAULT).unwrap();
    assert_rel("E", e.value, 10.0e6, 1e-14);
    let tv = vacuum::TotalVoltageFit::cranberg(vacuum::CRANBERG_C_DEFAULT).unwrap();
    assert_rel("k d^0.5", tv.voltage(0.1).unwrap().value, 1.0e6, 1e-14);
}

#[test]
fn row_39_kilpatrick() {
    // Row 39 [C/D]: Kilpatrick (1957) in Boyd's form f = 1.64 MHz E² exp(-8.5/E): 28.64 MV/m at
    // 1 GHz, 1e-3. RF only: always flagged for DC use.
    let l = vacuum::kilpatrick_field(1.0e9, KilpatrickForm::Boyd).unwrap();
    assert_rel("E_K", l.value, 28.64e6, 1e-3);
    assert!(!l.validity.is_valid());
}

// --- properties

#[test]
fn raising_the_pressure_raises_every_gas_limit() {
    // Breakdown in the streamer regime grows with density (docs/references.md §1-§5).
    let opts = GasOptions::default();
    let pressures = [0.5, 1.0, 2.0, 5.0, 8.0].map(|b| b * BAR_PA);
    let coax = coax_profile(0.01, 0.05, 2000);
    let gases = |p: f64| {
        vec![
            pure("air", p, T0_K),
            pure("N2", p, T0_K),
            pure("CO2", p, T0_K),
            pure("SF6", p, T0_K),
            gas::sf6_n2(0.5, p, T0_K),
        ]
    };
    let limits = |p: f64| -> Vec<f64> {
        let mut v = Vec::new();
        for g in gases(p) {
            v.push(
                uniform::uniform_breakdown(&g, 0.01, &opts)
                    .unwrap()
                    .voltage
                    .value,
            );
            v.push(uniform::critical_field(&g, &opts).unwrap().value);
            v.push(
                insulator::gas_surface_limit(&g, 0.05, None, &opts)
                    .unwrap()
                    .value,
            );
        }
        for g in [
            pure("air", p, T0_K),
            pure("SF6", p, T0_K),
            pure("CO2", p, T0_K),
        ] {
            v.push(
                streamer::inception_default(&coax, &g, &opts)
                    .unwrap()
                    .factor,
            );
        }
        v.push(
            corona::onset_field_in_gas(PeekGeometry::Coaxial, 0.01, &pure("air", p, T0_K), 1.0)
                .unwrap()
                .value,
        );
        v.push(
            paschen::voltage_at_pd(&AIR, p * 1e-4, 0.01)
                .unwrap()
                .voltage_v,
        );
        v
    };
    let mut prev = limits(pressures[0]);
    for &p in &pressures[1..] {
        let next = limits(p);
        for (i, (a, b)) in prev.iter().zip(&next).enumerate() {
            assert!(b > a, "limit {i} did not rise at {p} Pa: {a} -> {b}");
        }
        prev = next;
    }
}

#[test]
fn temperature_enters_through_density() {
    // Same density at two temperatures gives the same limit (docs/references.md §1, density
    // correction, Massarczyk et al. 2016). SF6 at 3 bar is a real gas (Z ≈ 0.96, docs/references.md
    // §17), so the hot pressure of the same density comes from the real-gas mapping.
    let opts = GasOptions::default();
    let cold = pure("SF6", 3.0 * BAR_PA, T0_K);
    let sf6 = vec![("SF6".to_string(), 1.0)];
    let p_hot = holdoff::thermo::same_density_pressure_pa(&sf6, 3.0 * BAR_PA, T0_K, 333.15);
    let hot = pure("SF6", p_hot, 333.15);
    let a = uniform::critical_field(&cold, &opts).unwrap().value;
    let b = uniform::critical_field(&hot, &opts).unwrap().value;
    assert_rel("density", b, a, 1e-12);
}

#[test]
fn air_streamer_inception_on_a_coax_agrees_with_peek() {
    // Two independent references for the same onset: the streamer integral with the air
    // quadratic fit (Kuffel et al. 2000 Ch. 5, K = 9, from memory) on a coaxial gap a = 1 cm,
    // b = 5 cm at 1 atm, 25 °C, against Peek's coaxial onset 31·δ·(1 + 0.308/sqrt(δ r)) kV/cm
    // (Peek 1929, from memory) at the same density. Peek's is a visual-onset fit, so 5 %.
    let gas = pure("air", ATM_PA, 298.15);
    let opts = GasOptions::default();
    let inc = streamer::inception_default(&coax_profile(0.01, 0.05, 2000), &gas, &opts).unwrap();
    let peek = corona::onset_field_in_gas(PeekGeometry::Coaxial, 0.01, &gas, 1.0).unwrap();
    assert!(peek.validity.is_valid() && inc.integral.validity.is_valid());
    assert!(
        rel(inc.surface_field_v_per_m, peek.value) < 0.05,
        "streamer {} vs Peek {}",
        inc.surface_field_v_per_m,
        peek.value
    );
}

#[test]
fn sf6_area_derating_keeps_both_values() {
    // Large stressed areas in SF6: 50-70 % of the limiting field (docs/references.md §3); the default
    // 0.6 is common practice. The limit carries the ideal and the derated value.
    let ideal = uniform::critical_field(&sf6(3.0 * BAR_PA), &GasOptions::default()).unwrap();
    let derated = ideal
        .clone()
        .derated(holdoff::breakdown::Derating::large_area("SF6"));
    assert_eq!(derated.ideal, ideal.value);
    assert_rel("derated", derated.value, 0.6 * ideal.value, 1e-15);
    assert!(!derated.derating.is_ideal());
}
