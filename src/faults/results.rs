//! What a fault replay gives: scenario results, resistor checks, fired gaps, the Monte Carlo
//! summary, spark energies, ladder equivalents and the replay's options.

use super::*;

/// What a scenario changes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    Nominal,
    Open,
    Short,
    Tolerance,
    Transient,
}

/// A resistor of a column: gap g (between nodes g and g + 1) of string s.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct ResistorRef {
    /// Running index over all resistors of all columns (column-major, gap, then string).
    pub index: usize,
    #[serde(serialize_with = "crate::units::from_one")]
    pub column: usize,
    #[serde(serialize_with = "crate::units::from_one")]
    pub gap: usize,
    #[serde(serialize_with = "crate::units::from_one")]
    pub string: usize,
}

/// A protective gap that fired (or may fire, within its band) in a scenario.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FiredGap {
    #[serde(serialize_with = "crate::units::from_one")]
    pub column: usize,
    pub from_node: usize,
    pub to_node: usize,
    pub voltage_v: f64,
    pub firing_v: f64,
}

/// The result of one scenario.
#[derive(Debug, Clone, Serialize)]
pub struct ScenarioResult {
    /// 1 = worst.
    pub rank: usize,
    pub name: String,
    pub kind: Kind,
    pub resistor: Option<ResistorRef>,
    /// Gap voltages per column, V (node g + 1 minus node g).
    pub gap_voltages_v: Vec<Vec<f64>>,
    /// Smallest margin of the field checks (`margin::evaluate`), when any row has a number.
    pub worst_margin: Option<f64>,
    pub worst_item: Option<String>,
    /// Criterion of the worst row.
    pub worst_criterion: Option<String>,
    /// Worst margin relative to the nominal one, minus 1 (−0.05 = 5 % less margin).
    pub change_from_nominal: Option<f64>,
    /// True when any protective gap fired (or reached the bottom of its firing band).
    pub protective_gap_fired: bool,
    pub fired_gaps: Vec<FiredGap>,
    /// Largest |gap voltage| over all columns, V, and the largest ratio to the nominal DC
    /// voltage of the same gap.
    pub max_gap_v: f64,
    pub max_gap_ratio_to_nominal: f64,
    /// Smallest (bottom-of-band firing voltage)/|span voltage| over the protective gaps.
    pub protective_gap_margin: Option<f64>,
    /// Resistor voltages and dissipation against the columns' ratings.
    pub resistors: ResistorCheck,
    /// True when a resistor's voltage (after any protective gap clamps, for the transient) or
    /// its dissipation exceeds its rating.
    pub resistor_rating_exceeded: bool,
    /// Protective gaps that hold a DC fault and so fire over and over (DC scenarios only).
    pub repetitive_firing: Vec<RepetitiveFiring>,
    /// True for the transient with the protective gaps conducting (`clamped_step`); false for
    /// every other scenario, the bare transient included.
    pub protective_gaps_conducting: bool,
}

/// The grading resistors of a scenario against their ratings.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct ResistorCheck {
    /// Largest voltage across one resistor, V, and its place (column, gap; 0-based).
    pub max_v: f64,
    pub max_at: Option<(usize, usize)>,
    /// The same with protective gaps clamping at the top of their firing band, V: across a
    /// gap bridged by a protective gap (alone or within its section) the resistor sees at
    /// most that gap's clamp voltage. Equal to `max_v` without protective gaps.
    pub clamped_max_v: f64,
    pub clamped_max_at: Option<(usize, usize)>,
    /// Voltage rating ÷ clamped voltage, smallest over the columns that give a rating (for
    /// the transient the impulse rating, or the DC rating when none is given).
    pub rating_margin: Option<f64>,
    /// Largest steady dissipation of one resistor, W (DC scenarios only).
    pub max_power_w: Option<f64>,
    /// Power rating ÷ dissipation, smallest over the columns that give a power rating.
    pub power_margin: Option<f64>,
}

/// What one scenario's evaluation gives, before it is named and ranked.
pub(super) struct Evaluated {
    pub(super) gap_v: Vec<Vec<f64>>,
    pub(super) fired: Vec<FiredGap>,
    pub(super) gap_margin: Option<f64>,
    pub(super) worst: Worst,
    pub(super) resistors: (ResistorCheck, bool),
    pub(super) repetitive: Vec<RepetitiveFiring>,
}

impl ScenarioResult {
    pub(super) fn assemble(
        name: String,
        kind: Kind,
        resistor: Option<ResistorRef>,
        e: Evaluated,
        nominal_gaps: &[Vec<f64>],
        nominal_worst: Option<f64>,
    ) -> ScenarioResult {
        let (wm, wi, wc) = e.worst;
        ScenarioResult {
            rank: 0,
            name,
            kind,
            resistor,
            max_gap_v: max_abs(&e.gap_v),
            max_gap_ratio_to_nominal: max_ratio(&e.gap_v, nominal_gaps),
            gap_voltages_v: e.gap_v,
            worst_margin: wm,
            worst_item: wi,
            worst_criterion: wc,
            change_from_nominal: match (wm, nominal_worst) {
                (Some(a), Some(b)) if b != 0.0 => Some(a / b - 1.0),
                _ => None,
            },
            protective_gap_fired: !e.fired.is_empty(),
            fired_gaps: e.fired,
            protective_gap_margin: e.gap_margin,
            resistors: e.resistors.0,
            resistor_rating_exceeded: e.resistors.1,
            repetitive_firing: e.repetitive,
            protective_gaps_conducting: false,
        }
    }
}

/// Spread of the worst margin over the Monte Carlo draws.
#[derive(Debug, Clone, Serialize)]
pub struct MonteCarlo {
    pub draws: usize,
    pub seed: u64,
    /// How each resistor was drawn.
    pub distribution: String,
    pub worst_margin_min: Option<f64>,
    pub worst_margin_mean: Option<f64>,
    pub worst_margin_max: Option<f64>,
    /// Standard deviation of the worst margin over the draws.
    pub worst_margin_std: Option<f64>,
    /// Draw (0-based) with the smallest worst margin.
    pub worst_draw: Option<usize>,
    pub max_gap_v: f64,
    /// The most loaded gap of each draw against its nominal DC voltage (the draw's
    /// `max_gap_ratio_to_nominal`): mean and largest over the draws.
    pub gap_ratio_mean: f64,
    pub gap_ratio_max: f64,
}

/// Energies of a terminal-to-tank spark, J.
#[derive(Debug, Clone, Serialize)]
pub struct SparkEnergy {
    /// The column sections shorted (empty for the machine as designed).
    pub shorted_sections: Vec<Section>,
    /// Electrostatic energy of the electrodes before the spark, ½VᵀCV.
    pub stored_j: f64,
    /// Released in the fast collapse (stored minus what the floating column still holds).
    pub released_fast_j: f64,
}

/// What the fault replay computes.
#[derive(Debug, Clone, Serialize)]
pub struct FaultReplay {
    /// The terminal voltage of the design, or, when no conductor is tied to it (a stage-fed
    /// terminal), the highest conductor potential of the nominal state, V.
    pub terminal_voltage_v: f64,
    pub nominal_worst_margin: Option<f64>,
    /// Ranked worst first.
    pub scenarios: Vec<ScenarioResult>,
    pub monte_carlo: Option<MonteCarlo>,
    pub electrodes: Vec<String>,
    pub capacitance_matrix_f: Vec<Vec<f64>>,
    pub capacitance_asymmetry: f64,
    /// Each column as a uniform capacitive ladder (for comparison with hand estimates).
    pub ladder_equivalents: Vec<LadderEquivalent>,
    pub spark_energy: Option<SparkEnergy>,
    /// The spark energy with the chosen column sections shorted, as during conditioning.
    pub spark_energy_conditioning: Option<SparkEnergy>,
    pub networks: Vec<Network>,
    pub basis_memory_bytes: usize,
    /// Wall-clock seconds of the unit solves (basis and capacitance matrix) and of the
    /// scenarios' field checks (not serialized, so that a rerun gives the same JSON).
    #[serde(skip)]
    pub basis_seconds: f64,
    #[serde(skip)]
    pub scenario_seconds: f64,
    /// Scenarios whose field checks were shared with an identical one (the same resistor in
    /// another string).
    pub shared_evaluations: usize,
    /// What the replay assumes, as data (`report::faults::notes` words them; the JSON
    /// carries the words).
    #[serde(skip)]
    pub notes: Vec<ReplayNote>,
}

impl FaultReplay {
    /// The spark transient: the bare one (column floating) or, with `gaps_conducting`, the
    /// one with the protective gaps conducting, when it was formed.
    pub fn transient(&self, gaps_conducting: bool) -> Option<&ScenarioResult> {
        self.scenarios
            .iter()
            .find(|s| s.kind == Kind::Transient && s.protective_gaps_conducting == gaps_conducting)
    }
}

/// A column seen as the uniform capacitive ladder of the hand estimates, from the solved
/// capacitance matrix: series capacitance between neighbouring electrodes, shunt capacitance
/// of each electrode to ground, and α = √(C_p/C_s) per gap.
#[derive(Debug, Clone, Serialize)]
pub struct LadderEquivalent {
    #[serde(serialize_with = "crate::units::from_one")]
    pub column: usize,
    pub name: String,
    /// Mean mutual capacitance between neighbouring electrodes, F.
    pub series_f: f64,
    /// Mean capacitance of an electrode to ground (its row sum of the Maxwell matrix), F.
    pub shunt_f: f64,
    pub alpha_per_gap: f64,
    /// α times the gap count: the hand estimates' steepness of the transient distribution.
    pub alpha_n: f64,
    /// The ladder's voltage across the gap at the `to` end just after that end falls to
    /// ground, V: −V(N−1)/N + V·sinh(α(N−1))/sinh(αN) for a uniform chain of N gaps at end-to-end
    /// voltage V (the node shift −V·sinh(αx)/sinh(αN), docs/practice.md §2.5, added to the linear
    /// profile). It keeps only neighbour and ground capacitances; the transient scenario uses
    /// the whole matrix.
    pub ladder_end_gap_v: f64,
}

/// The voltage across the end gap of a uniform capacitive ladder of `gaps` gaps at
/// end-to-end voltage `v` just after that end falls to ground: −v(N−1)/N + v·sinh(α(N−1))/
/// sinh(αN), with the ratio written as e^{−α}(1 − e^{−2α(N−1)})/(1 − e^{−2αN}) so that it stays
/// finite for any αN.
pub fn ladder_end_gap(v: f64, alpha: f64, gaps: f64) -> f64 {
    let ratio = (-alpha).exp() * (1.0 - (-2.0 * alpha * (gaps - 1.0)).exp())
        / (1.0 - (-2.0 * alpha * gaps).exp());
    -v * (gaps - 1.0) / gaps + v * ratio
}

/// The ladder equivalents of every column whose electrodes are in the basis.
pub fn ladder_equivalents(
    model: &Model,
    basis: &Basis,
    stage_v: Option<&[f64]>,
) -> Result<Vec<LadderEquivalent>, FaultError> {
    let c = &basis.capacitance.c_f;
    model
        .columns
        .iter()
        .enumerate()
        .filter_map(|(ci, col)| {
            let e: Vec<usize> = col
                .electrodes
                .iter()
                .filter_map(|&k| basis.conductor_electrode.get(k).copied().flatten())
                .collect();
            if e.len() < 2 || e.len() != col.electrodes.len() {
                return None;
            }
            let series: Vec<f64> = e.windows(2).map(|w| -c[w[0]][w[1]]).collect();
            let shunt: Vec<f64> = e.iter().map(|&i| c[i].iter().sum::<f64>()).collect();
            let cs = series.iter().sum::<f64>() / series.len() as f64;
            let cp = shunt.iter().sum::<f64>() / shunt.len() as f64;
            if cs.is_nan() || cp.is_nan() || cs <= 0.0 || cp <= 0.0 {
                return None;
            }
            let alpha = (cp / cs).sqrt();
            let gaps = (col.electrodes.len() + 1) as f64;
            let (v0, v1) = match grading::column_ends(model, stage_v, ci) {
                Ok(ends) => ends,
                Err(e) => return Some(Err(e.into())),
            };
            let ladder_end_gap_v = ladder_end_gap(v1 - v0, alpha, gaps);
            Some(Ok(LadderEquivalent {
                column: ci,
                name: col.name.clone(),
                series_f: cs,
                shunt_f: cp,
                alpha_per_gap: alpha,
                alpha_n: alpha * gaps,
                ladder_end_gap_v,
            }))
        })
        .collect()
}

/// Consecutive gaps of a column shorted together, as during conditioning: gaps `first_gap` to
/// `last_gap` (0-based, inclusive) of column `column`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct Section {
    #[serde(serialize_with = "crate::units::from_one")]
    pub column: usize,
    #[serde(serialize_with = "crate::units::from_one")]
    pub first_gap: usize,
    #[serde(serialize_with = "crate::units::from_one")]
    pub last_gap: usize,
}

/// Settings of a replay.
#[derive(Debug, Clone)]
pub struct ReplayOptions {
    /// Monte Carlo draws of the resistor tolerance (0 = none).
    pub samples: usize,
    pub seed: u64,
    /// Sections shorted for the conditioning spark energy (empty = none).
    pub shorted_sections: Vec<Section>,
    /// Evaluate every row of every scenario, instead of screening the conductors whose rows
    /// cannot set a scenario's worst margin (the same results, slower; for checking).
    pub exhaustive: bool,
}

impl Default for ReplayOptions {
    fn default() -> Self {
        Self {
            samples: 200,
            seed: 1,
            shorted_sections: Vec::new(),
            exhaustive: false,
        }
    }
}
