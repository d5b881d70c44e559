//! Unit conversions and reference conditions shared by the criteria.
//!
//! Conventions of docs/references.md (§ unit conventions): 1 Torr·cm = 1.33322 Pa·m =
//! 0.013332 bar·mm; 1 bar·mm = 100 Pa·m; 1 Td = 1e-21 V·m². The reduced field unit
//! kV/(cm·bar) equals exactly 1 V/(m·Pa), which is the SI unit of E/p used throughout.

/// Boltzmann constant, J/K (CODATA 2018, exact).
pub const BOLTZMANN_J_PER_K: f64 = 1.380_649e-23;

/// Reference temperature of the gas fits, K (20 °C). Pressures in the fits are read as the
/// pressure the same gas density would have at this temperature ("density-reduced pressure").
pub const T0_K: f64 = 293.15;

/// One standard atmosphere, Pa (exact by definition).
pub const ATM_PA: f64 = 101_325.0;

/// One Torr, Pa (1 atm / 760, exact by definition).
pub const TORR_PA: f64 = ATM_PA / 760.0;

/// One Torr·cm in Pa·m (≈ 1.33322).
pub const TORR_CM_PA_M: f64 = TORR_PA * 0.01;

/// One bar, Pa.
pub const BAR_PA: f64 = 1.0e5;

/// One bar·cm in Pa·m.
pub const BAR_CM_PA_M: f64 = 1.0e3;

/// One bar·mm in Pa·m.
pub const BAR_MM_PA_M: f64 = 100.0;

/// One townsend (Td) in V·m².
pub const TOWNSEND_V_M2: f64 = 1.0e-21;

/// One V/(cm·Torr) expressed in V/(m·Pa) (≈ 0.75006).
pub const V_PER_CM_TORR: f64 = 100.0 / TORR_PA;

/// One kV/(cm·bar) expressed in V/(m·Pa) (exactly 1).
pub const KV_PER_CM_BAR: f64 = 1.0;

/// Torr·cm → Pa·m.
pub fn torr_cm_to_pa_m(pd_torr_cm: f64) -> f64 {
    pd_torr_cm * TORR_CM_PA_M
}

/// Pa·m → Torr·cm.
pub fn pa_m_to_torr_cm(pd_pa_m: f64) -> f64 {
    pd_pa_m / TORR_CM_PA_M
}

/// Pa·m → bar·cm.
pub fn pa_m_to_bar_cm(pd_pa_m: f64) -> f64 {
    pd_pa_m / BAR_CM_PA_M
}

/// Pa·m → bar·mm.
pub fn pa_m_to_bar_mm(pd_pa_m: f64) -> f64 {
    pd_pa_m / BAR_MM_PA_M
}

/// A per-(cm·Torr) Paschen constant (A in 1/(cm·Torr) or B in V/(cm·Torr)) in per-(Pa·m).
pub fn per_torr_cm_to_per_pa_m(value: f64) -> f64 {
    value / TORR_CM_PA_M
}

/// E/p in V/(m·Pa) → V/(cm·Torr).
pub fn e_over_p_to_v_per_cm_torr(e_over_p_v_per_m_pa: f64) -> f64 {
    e_over_p_v_per_m_pa / V_PER_CM_TORR
}

/// Reduced field E/N in Td → V·m².
pub fn td_to_v_m2(td: f64) -> f64 {
    td * TOWNSEND_V_M2
}

/// Density-reduced pressure, Pa: the pressure that `number_density_m3` would have at 20 °C.
pub fn reduced_pressure_pa(number_density_m3: f64) -> f64 {
    number_density_m3 * BOLTZMANN_J_PER_K * T0_K
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kv_per_cm_bar_is_one_v_per_m_pa() {
        // 1 kV/cm = 1e5 V/m; 1 bar = 1e5 Pa.
        assert!((1.0e5 / BAR_PA - KV_PER_CM_BAR).abs() < 1e-15);
    }

    #[test]
    fn reduced_pressure_at_t0_is_the_pressure() {
        let n = 2.0e5 / (BOLTZMANN_J_PER_K * T0_K);
        assert!((reduced_pressure_pa(n) - 2.0e5).abs() < 1e-9);
    }
}
