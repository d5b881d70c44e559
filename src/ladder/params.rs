//! Ladder parameters: topology, capacitors, drive, diodes, load, strays; validation.
//!
//! Node numbering (used by per-node stray capacitances and by `potential = "stage:N"`):
//! stage k = 1..n contributes, in this order,
//! half-wave: oscillating node `o{k}`, smoothing node `s{k}`;
//! symmetric: oscillating node `oa{k}` (column fed +V), `ob{k}` (column fed −V), smoothing
//! node `s{k}`. The drive node(s) `o0` (`oa0`, `ob0`) and the grounded foot `s0` of the smoothing
//! column are fixed and carry no unknown. Stage k's smoothing node `s{k}` is the stage's DC
//! output; `s{n}` is the terminal.

use super::error::LadderError;
use crate::model::Multiplier;
use serde::Serialize;

/// Largest stage count accepted: far above any built stack (a few MV at 20–100 kV per stage
/// is 20–150 stages), and where the dense one-cycle sensitivity of the shooting step
/// (O(nodes²) per time step) still runs in seconds.
pub const MAX_STAGES: usize = 400;

/// Cascade topology.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Topology {
    /// Single-phase Greinacher/Cockcroft–Walton cascade: one oscillating, one smoothing column.
    HalfWave,
    /// Two-phase cascade: two oscillating columns fed ±V, one smoothing column.
    Symmetric,
}

impl Topology {
    /// Parses the design-file spelling ("half-wave" or "symmetric").
    pub fn parse(s: &str) -> Result<Self, LadderError> {
        match s {
            "half-wave" => Ok(Topology::HalfWave),
            "symmetric" => Ok(Topology::Symmetric),
            other => Err(LadderError::invalid(
                "multiplier.topology",
                format!("\"{other}\""),
                "\"half-wave\" or \"symmetric\"",
            )),
        }
    }

    pub fn as_str(&self) -> &'static str {
        match self {
            Topology::HalfWave => "half-wave",
            Topology::Symmetric => "symmetric",
        }
    }

    /// Oscillating columns (1 or 2).
    pub fn oscillating_columns(&self) -> usize {
        match self {
            Topology::HalfWave => 1,
            Topology::Symmetric => 2,
        }
    }

    /// Unknown nodes per stage.
    pub fn nodes_per_stage(&self) -> usize {
        self.oscillating_columns() + 1
    }
}

/// Drive waveform of the transformer or inverter, referred to the ladder foot.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Waveform {
    /// V₀·sin(2πft).
    Sine,
    /// ±V₀ with linear edges lasting `rise_fraction` of a period, centred on the zero
    /// crossings of the sine of the same phase (0 < rise_fraction ≤ 0.5; 0.5 is a triangle).
    Square { rise_fraction: f64 },
}

/// The drive: peak voltage per phase, frequency, waveform.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Drive {
    pub peak_v: f64,
    pub frequency_hz: f64,
    pub waveform: Waveform,
}

impl Drive {
    /// Source voltage at time t (phase 0 at t = 0, rising).
    pub fn value(&self, t: f64) -> f64 {
        let period = 1.0 / self.frequency_hz;
        match self.waveform {
            Waveform::Sine => self.peak_v * (std::f64::consts::TAU * self.frequency_hz * t).sin(),
            Waveform::Square { rise_fraction } => {
                // Phase in [0, 1): edges centred on 0 and 0.5.
                let x = (t / period).rem_euclid(1.0);
                let half = 0.5 * rise_fraction;
                let shape = if x < half {
                    x / half
                } else if x < 0.5 - half {
                    1.0
                } else if x < 0.5 + half {
                    1.0 - 2.0 * (x - (0.5 - half)) / rise_fraction
                } else if x < 1.0 - half {
                    -1.0
                } else {
                    -1.0 + (x - (1.0 - half)) / half
                };
                self.peak_v * shape.clamp(-1.0, 1.0)
            }
        }
    }

    pub fn period_s(&self) -> f64 {
        1.0 / self.frequency_hz
    }
}

/// Rectifier (diode string with its series resistor) as a piecewise-linear element with a
/// rounded knee: leakage 1/R_off everywhere, and above V_f an extra conductance rising to
/// 1/R_on over the knee width w (quadratic, so the curve is C¹). Monotone and convex, so
/// Newton iteration on it is well behaved; exactly off below V_f.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct DiodeParams {
    /// Forward drop V_f of the whole string, V.
    pub forward_drop_v: f64,
    /// On-state resistance, including any series surge resistor, Ω.
    pub on_resistance_ohm: f64,
    /// Off-state (leakage) resistance, Ω.
    pub off_resistance_ohm: f64,
    /// Width of the smoothed knee, V.
    pub knee_v: f64,
}

impl DiodeParams {
    /// A near-ideal rectifier for a stage of capacitance `c` driven at `f` with peak `v0`:
    /// V_f = 0, R_on = 10⁻⁴/(2πfC), R_off = 10¹⁰/(2πfC), knee 10⁻⁹·V₀. Used for the
    /// comparisons with the ideal-diode closed forms.
    pub fn near_ideal(c: f64, f: f64, v0: f64) -> Self {
        let x = 1.0 / (std::f64::consts::TAU * f * c);
        Self {
            forward_drop_v: 0.0,
            on_resistance_ohm: 1e-4 * x,
            off_resistance_ohm: 1e10 * x,
            knee_v: 1e-9 * v0,
        }
    }
}

/// The DC load on the terminal.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Load {
    /// A constant current drawn from the terminal (beam, divider and leakage together), A.
    Current {
        #[serde(rename = "current_a")]
        amps: f64,
    },
    /// A resistor from the terminal to ground, Ω.
    Resistance {
        #[serde(rename = "resistance_ohm")]
        ohms: f64,
    },
}

/// Stage capacitances, each listed from stage 1 (bottom) to stage n (terminal).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Capacitors {
    /// Oscillating ("pushing") column; the column fed +V in a symmetric cascade. Capacitor k
    /// joins node o{k−1} to o{k}.
    pub oscillating_f: Vec<f64>,
    /// Second oscillating column (fed −V) of a symmetric cascade; empty for half-wave.
    pub oscillating_b_f: Vec<f64>,
    /// Smoothing (DC) column. Capacitor k joins s{k−1} to s{k}.
    pub smoothing_f: Vec<f64>,
}

impl Capacitors {
    /// Every capacitor equal to `c`.
    pub fn uniform(topology: Topology, stages: usize, c: f64) -> Self {
        Self {
            oscillating_f: vec![c; stages],
            oscillating_b_f: match topology {
                Topology::HalfWave => Vec::new(),
                Topology::Symmetric => vec![c; stages],
            },
            smoothing_f: vec![c; stages],
        }
    }

    /// The common value when all capacitors are equal (to 1e-12 relative).
    pub fn common_value(&self) -> Option<f64> {
        let first = *self.smoothing_f.first()?;
        let all = self
            .oscillating_f
            .iter()
            .chain(&self.oscillating_b_f)
            .chain(&self.smoothing_f);
        let mut equal = true;
        for &c in all {
            equal &= (c - first).abs() <= 1e-12 * first.abs();
        }
        equal.then_some(first)
    }
}

/// A column of the ladder.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Column {
    /// The oscillating column (fed +V in a symmetric cascade).
    Oscillating,
    /// The second oscillating column of a symmetric cascade (fed −V).
    OscillatingB,
    /// The smoothing (DC) column.
    Smoothing,
}

impl Column {
    pub(crate) fn prefix(&self, topology: Topology) -> &'static str {
        match (self, topology) {
            (Column::Oscillating, Topology::HalfWave) => "o",
            (Column::Oscillating, Topology::Symmetric) => "oa",
            (Column::OscillatingB, _) => "ob",
            (Column::Smoothing, _) => "s",
        }
    }
}

/// Everything the circuit model needs. Build with [`LadderParams::uniform`] or
/// [`LadderParams::from_multiplier`], adjust the public fields, and `simulate` validates.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LadderParams {
    pub topology: Topology,
    pub stages: usize,
    pub capacitors: Capacitors,
    pub drive: Drive,
    pub diode: DiodeParams,
    pub load: Load,
    /// Capacitance of every unknown node to ground, in the node order of the module docs, F.
    pub strays_f: Vec<f64>,
    /// Resistance of the voltage divider across the stack, Ω (for the discharge estimate).
    pub divider_ohm: Option<f64>,
    /// Dump (bleeder) resistor switched across the stack when it is made safe, Ω.
    pub dump_ohm: Option<f64>,
}

impl LadderParams {
    /// Equal capacitors, sinusoidal drive, constant-current load, near-ideal diodes, no strays.
    pub fn uniform(
        topology: Topology,
        stages: usize,
        stage_capacitance_f: f64,
        drive_peak_v: f64,
        drive_frequency_hz: f64,
        load_current_a: f64,
    ) -> Result<Self, LadderError> {
        check_count("multiplier.stages", stages)?;
        check_positive("multiplier.stage_capacitance", stage_capacitance_f, "F")?;
        check_positive("multiplier.drive_peak", drive_peak_v, "V")?;
        check_positive("multiplier.drive_frequency", drive_frequency_hz, "Hz")?;
        let p = Self {
            topology,
            stages,
            capacitors: Capacitors::uniform(topology, stages, stage_capacitance_f),
            drive: Drive {
                peak_v: drive_peak_v,
                frequency_hz: drive_frequency_hz,
                waveform: Waveform::Sine,
            },
            diode: DiodeParams::near_ideal(stage_capacitance_f, drive_frequency_hz, drive_peak_v),
            load: Load::Current {
                amps: load_current_a,
            },
            strays_f: vec![0.0; stages * topology.nodes_per_stage()],
            divider_ohm: None,
            dump_ohm: None,
        };
        p.validate()?;
        Ok(p)
    }

    /// From the validated `[multiplier]` table. `per_node_strays_f` (node order of the module
    /// docs) takes precedence; otherwise a numeric `stray_capacitance` is put on every node.
    /// With `stray_capacitance = "auto"` the per-node values must be supplied.
    pub fn from_multiplier(
        m: &Multiplier,
        per_node_strays_f: Option<Vec<f64>>,
    ) -> Result<Self, LadderError> {
        let topology = Topology::parse(&m.topology)?;
        let mut p = Self::uniform(
            topology,
            m.stages,
            m.stage_capacitance_f,
            m.drive_peak_v,
            m.drive_frequency_hz,
            m.load_current_a,
        )?;
        let nodes = p.node_count();
        p.strays_f = match (per_node_strays_f, m.stray_capacitance_f) {
            (Some(v), _) => v,
            (None, Some(c)) => {
                check_non_negative("multiplier.stray_capacitance", c, "F")?;
                vec![c; nodes]
            }
            (None, None) => return Err(LadderError::StraysNotSupplied { nodes }),
        };
        p.validate()?;
        Ok(p)
    }

    /// Puts the same stray capacitance on every node.
    pub fn with_uniform_strays(mut self, c_f: f64) -> Self {
        self.strays_f = vec![c_f; self.node_count()];
        self
    }

    /// Number of unknown nodes.
    pub fn node_count(&self) -> usize {
        self.stages * self.topology.nodes_per_stage()
    }

    /// Index of node (column, stage) in the node order, stage 1..=n.
    pub fn node_index(&self, column: Column, stage: usize) -> Option<usize> {
        if stage == 0 || stage > self.stages {
            return None;
        }
        let base = (stage - 1) * self.topology.nodes_per_stage();
        match (self.topology, column) {
            (Topology::HalfWave, Column::Oscillating) => Some(base),
            (Topology::HalfWave, Column::Smoothing) => Some(base + 1),
            (Topology::HalfWave, Column::OscillatingB) => None,
            (Topology::Symmetric, Column::Oscillating) => Some(base),
            (Topology::Symmetric, Column::OscillatingB) => Some(base + 1),
            (Topology::Symmetric, Column::Smoothing) => Some(base + 2),
        }
    }

    /// Labels of the unknown nodes in order ("o1", "s1", … or "oa1", "ob1", "s1", …).
    pub fn node_labels(&self) -> Vec<String> {
        let cols: &[Column] = match self.topology {
            Topology::HalfWave => &[Column::Oscillating, Column::Smoothing],
            Topology::Symmetric => &[Column::Oscillating, Column::OscillatingB, Column::Smoothing],
        };
        (1..=self.stages)
            .flat_map(|k| {
                cols.iter()
                    .map(move |c| format!("{}{k}", c.prefix(self.topology)))
            })
            .collect()
    }

    /// Mean load current estimate for a terminal at `v_out` volts.
    pub fn load_current_at(&self, v_out: f64) -> f64 {
        match self.load {
            Load::Current { amps } => amps,
            Load::Resistance { ohms } => v_out / ohms,
        }
    }

    /// Checks every field; the error names the field and the value.
    pub fn validate(&self) -> Result<(), LadderError> {
        let n = self.stages;
        check_count("multiplier.stages", n)?;
        check_positive("multiplier.drive_peak", self.drive.peak_v, "V")?;
        check_positive("multiplier.drive_frequency", self.drive.frequency_hz, "Hz")?;
        if let Waveform::Square { rise_fraction } = self.drive.waveform
            && !(rise_fraction > 0.0 && rise_fraction <= 0.5)
        {
            return Err(LadderError::invalid(
                "drive.rise_fraction",
                rise_fraction,
                "a fraction of the period in (0, 0.5]",
            ));
        }
        let caps = &self.capacitors;
        check_list("capacitors.oscillating", &caps.oscillating_f, n)?;
        check_list("capacitors.smoothing", &caps.smoothing_f, n)?;
        match self.topology {
            Topology::HalfWave if !caps.oscillating_b_f.is_empty() => {
                return Err(LadderError::invalid(
                    "capacitors.oscillating_b",
                    format!("{} values", caps.oscillating_b_f.len()),
                    "no values for a half-wave multiplier",
                ));
            }
            Topology::Symmetric => {
                check_list("capacitors.oscillating_b", &caps.oscillating_b_f, n)?
            }
            _ => {}
        }
        let d = &self.diode;
        if !(d.forward_drop_v >= 0.0 && d.forward_drop_v < self.drive.peak_v) {
            return Err(LadderError::invalid(
                "diode.forward_drop",
                format!("{} V", d.forward_drop_v),
                "a drop ≥ 0 V and below the drive peak",
            ));
        }
        check_positive("diode.on_resistance", d.on_resistance_ohm, "Ohm")?;
        check_positive("diode.off_resistance", d.off_resistance_ohm, "Ohm")?;
        if d.off_resistance_ohm <= d.on_resistance_ohm {
            return Err(LadderError::invalid(
                "diode.off_resistance",
                format!("{} Ohm", d.off_resistance_ohm),
                "a value above diode.on_resistance",
            ));
        }
        check_positive("diode.knee", d.knee_v, "V")?;
        match self.load {
            Load::Current { amps } => check_non_negative("multiplier.load_current", amps, "A")?,
            Load::Resistance { ohms } => check_positive("load.resistance", ohms, "Ohm")?,
        }
        if self.strays_f.len() != self.node_count() {
            return Err(LadderError::invalid(
                "multiplier.stray_capacitance",
                format!("{} per-node values", self.strays_f.len()),
                &format!(
                    "{} values, one per node in the order {}…",
                    self.node_count(),
                    self.node_labels()
                        .iter()
                        .take(2 * self.topology.nodes_per_stage())
                        .cloned()
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            ));
        }
        for (label, &c) in self.node_labels().iter().zip(&self.strays_f) {
            check_non_negative(&format!("multiplier.stray_capacitance[{label}]"), c, "F")?;
        }
        if let Some(r) = self.divider_ohm {
            check_positive("divider_resistance", r, "Ohm")?;
        }
        if let Some(r) = self.dump_ohm {
            check_positive("dump_resistance", r, "Ohm")?;
        }
        Ok(())
    }
}

fn check_count(field: &str, n: usize) -> Result<(), LadderError> {
    if n == 0 || n > MAX_STAGES {
        return Err(LadderError::invalid(
            field,
            n,
            &format!("a stage count from 1 to {MAX_STAGES}"),
        ));
    }
    Ok(())
}

pub(crate) fn check_positive(field: &str, v: f64, unit: &str) -> Result<(), LadderError> {
    if !(v.is_finite() && v > 0.0) {
        return Err(LadderError::invalid(
            field,
            format!("{v} {unit}"),
            "a finite value > 0",
        ));
    }
    Ok(())
}

pub(crate) fn check_non_negative(field: &str, v: f64, unit: &str) -> Result<(), LadderError> {
    if !(v.is_finite() && v >= 0.0) {
        return Err(LadderError::invalid(
            field,
            format!("{v} {unit}"),
            "a finite value ≥ 0",
        ));
    }
    Ok(())
}

fn check_list(field: &str, values: &[f64], n: usize) -> Result<(), LadderError> {
    if values.len() != n {
        return Err(LadderError::invalid(
            field,
            format!("{} values", values.len()),
            &format!("one capacitance per stage ({n} values)"),
        ));
    }
    for (k, &c) in values.iter().enumerate() {
        check_positive(&format!("{field}[{}]", k + 1), c, "F")?;
    }
    Ok(())
}
