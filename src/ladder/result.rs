//! Results of a ladder simulation: plain data for reports and later pipeline stages.

use super::params::{Column, Topology};
use serde::Serialize;

/// A stage capacitor over the reported (steady-state) cycle.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CapacitorResult {
    /// "Co3" (half-wave oscillating), "Coa3"/"Cob3" (symmetric), "Cs3" (smoothing).
    pub label: String,
    pub column: Column,
    pub stage: usize,
    pub capacitance_f: f64,
    /// Cycle mean of the voltage (upper node minus lower node).
    pub mean_v: f64,
    /// Working voltage: largest |v| over the cycle.
    pub max_v: f64,
    /// RMS voltage over the cycle.
    pub rms_v: f64,
    /// Cycle average of ½Cv², i.e. ½C·rms².
    pub energy_j: f64,
}

/// A rectifier over the reported cycle.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DiodeResult {
    /// "Dc3" charges o3 from s2, "Dt3" transfers o3 to s3 ("Dca3", "Dtb3", … symmetric).
    pub label: String,
    pub anode: String,
    pub cathode: String,
    pub stage: usize,
    /// Peak inverse voltage: largest cathode − anode voltage over the cycle.
    pub peak_inverse_v: f64,
    pub peak_current_a: f64,
    pub mean_current_a: f64,
    /// Charge passed forward over the cycle.
    pub charge_per_cycle_c: f64,
}

/// One stage: its smoothing node (the stage's DC voltage), nodes, parts.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StageResult {
    pub stage: usize,
    /// Cycle-mean voltage of the smoothing node s{k} (the value `potential = "stage:k"` uses).
    pub mean_v: f64,
    /// Peak-to-peak ripple of s{k}.
    pub ripple_pp_v: f64,
    /// Cycle-mean voltage of the oscillating node(s) o{k} (oa{k}, ob{k}).
    pub oscillating_mean_v: Vec<f64>,
    /// Half the peak-to-peak swing of the oscillating node(s): the drive amplitude reaching
    /// the stage, lowered by strays.
    pub oscillating_amplitude_v: Vec<f64>,
    pub capacitors: Vec<CapacitorResult>,
    pub diodes: Vec<DiodeResult>,
    /// Σ of the stage capacitors' cycle-average ½Cv².
    pub stored_energy_j: f64,
}

/// Terminal quantities.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OutputSummary {
    /// 2nV₀.
    pub ideal_no_load_v: f64,
    /// Simulated cycle-mean output with the load removed (strays and diode drops included).
    pub no_load_v: f64,
    /// Simulated no-load output / (2nV₀): the stray (and diode-drop) efficiency.
    pub no_load_efficiency: f64,
    /// Cycle-mean terminal voltage at load.
    pub loaded_mean_v: f64,
    pub loaded_max_v: f64,
    pub loaded_min_v: f64,
    /// no_load_v − loaded_mean_v.
    pub drop_v: f64,
    /// no_load_v − loaded_max_v.
    pub peak_drop_v: f64,
    /// (no_load_v − loaded_mean_v)/loaded_mean_v.
    pub regulation: f64,
    /// Peak-to-peak ripple (max − min over one cycle).
    pub ripple_pp_v: f64,
    /// ripple_pp_v / loaded_mean_v.
    pub ripple_relative: f64,
    /// Cycle-mean load current.
    pub load_current_a: f64,
}

/// Stored energy in the stage capacitors.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EnergySummary {
    /// Σ ½Cv² over every stage capacitor, cycle-averaged, at load.
    pub total_j: f64,
    /// The same per stage, stage 1 first.
    pub per_stage_j: Vec<f64>,
    /// Σ ½C_s v² in the node strays (part of the field energy of the structure).
    pub strays_j: f64,
    pub convention: &'static str,
}

/// Discharge of the stack after the drive is removed (drive nodes held at 0 V).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Discharge {
    pub divider_ohm: Option<f64>,
    pub dump_ohm: Option<f64>,
    /// Divider and dump resistor in parallel.
    pub resistance_ohm: f64,
    /// Smoothing column in series: 1/Σ(1/C′_k).
    pub c_eff_f: f64,
    /// τ = R·C_eff.
    pub tau_s: f64,
    /// τ·ln 100.
    pub time_to_1pct_formula_s: f64,
    /// Time for the simulated terminal voltage to fall to 1 % of its starting value; the
    /// oscillating columns return their charge through the diodes, so this is longer.
    pub time_to_1pct_simulated_s: f64,
}

/// How one periodic run converged.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunInfo {
    /// Cycles simulated, shooting cycles included.
    pub cycles: usize,
    /// Shooting-Newton steps taken (0 without acceleration).
    pub shooting_iterations: usize,
    /// Largest |Φ(x) − x| at the last shooting evaluation, V.
    pub shooting_residual_v: Option<f64>,
    /// Slowest decay factor per cycle used for the remaining-drift bound.
    pub decay_per_cycle: Option<f64>,
    pub steps_per_cycle: usize,
    pub time_step_s: f64,
    pub integrator: &'static str,
    /// Cycle-mean output change between the last two cycles.
    pub final_mean_change_v: f64,
    /// Ripple change between the last two cycles.
    pub final_ripple_change_v: f64,
    /// Geometric-tail estimate of the drift still to come.
    pub estimated_remaining_v: f64,
    pub tolerance_v: f64,
    pub newton_iterations_max: usize,
    pub newton_iterations_mean: f64,
}

/// Convergence of the loaded run and of the no-load reference run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Convergence {
    pub loaded: RunInfo,
    /// None when the load is zero (the loaded run is the no-load run).
    pub no_load: Option<RunInfo>,
}

/// Charge per cycle: the load's against what the last diode(s) delivered.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChargeBalance {
    pub load_charge_per_cycle_c: f64,
    pub output_diode_charge_per_cycle_c: f64,
}

/// The terminal voltage over the reported cycle.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OutputWaveform {
    pub time_s: Vec<f64>,
    pub output_v: Vec<f64>,
}

/// Everything the simulation reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LadderResult {
    pub topology: Topology,
    pub stage_count: usize,
    pub output: OutputSummary,
    pub stages: Vec<StageResult>,
    pub energy: EnergySummary,
    pub discharge: Option<Discharge>,
    pub charge_balance: ChargeBalance,
    pub convergence: Convergence,
    pub conventions: Vec<&'static str>,
    pub waveform: Option<OutputWaveform>,
}

impl LadderResult {
    /// Cycle-mean voltage of smoothing node k (1 = bottom stage, n = terminal) at load.
    pub fn stage_mean_v(&self, k: usize) -> Option<f64> {
        k.checked_sub(1)
            .and_then(|i| self.stages.get(i))
            .map(|s| s.mean_v)
    }

    /// Largest working voltage of any stage capacitor.
    pub fn max_capacitor_v(&self) -> f64 {
        self.stages
            .iter()
            .flat_map(|s| s.capacitors.iter().map(|c| c.max_v))
            .fold(0.0, f64::max)
    }

    /// Largest peak inverse voltage of any rectifier.
    pub fn max_diode_piv_v(&self) -> f64 {
        self.stages
            .iter()
            .flat_map(|s| s.diodes.iter().map(|d| d.peak_inverse_v))
            .fold(0.0, f64::max)
    }

    /// Largest peak and mean rectifier currents.
    pub fn max_diode_currents_a(&self) -> (f64, f64) {
        self.stages
            .iter()
            .flat_map(|s| s.diodes.iter())
            .fold((0.0, 0.0), |(p, m), d| {
                (p.max(d.peak_current_a), m.max(d.mean_current_a))
            })
    }
}
