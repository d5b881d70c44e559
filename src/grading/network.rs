//! The DC grading network of a column: resistor strings per gap (open, shorted, scaled),
//! leakage, node currents and clamping protective gaps, solved for the node potentials.

use super::{GradingError, leakage};
use crate::model::{LeakageSpec, Model};
use serde::Serialize;
use thiserror::Error;

/// A shorted resistor is taken as this fraction of its value (a conductance 1e9 times its own,
/// far above every other branch, so the two nodes move together to 1e-9 of the gap voltage).
pub const SHORT_FRACTION: f64 = 1e-9;

/// Every gap also carries this conductance relative to the largest branch conductance, so that
/// a node cut off by open resistors still has a defined potential (it follows its neighbours)
/// instead of making the network singular.
const FLOOR_FRACTION: f64 = 1e-15;

/// A fired protective gap holds its firing voltage through a branch whose conductance is this
/// multiple of the median gap conductance (the clamp holds to about 1e-6).
const CLAMP_FACTOR: f64 = 1e6;

/// A protective spark gap across one gap or across a section of consecutive gaps.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProtectiveGap {
    /// Lower node of the span (0 = the column's `from` end).
    pub from_node: usize,
    /// Upper node of the span (> `from_node`).
    pub to_node: usize,
    /// Nominal firing voltage, V.
    pub firing_v: f64,
    /// Half-width of the firing band, fraction of `firing_v`.
    pub band: f64,
}

impl ProtectiveGap {
    /// Lowest voltage at which the gap may fire (bottom of the band), V.
    pub fn firing_low_v(&self) -> f64 {
        self.firing_v * (1.0 - self.band)
    }

    /// Highest voltage at which the gap may fire (top of the band), V: the most it lets
    /// through, at which a clamped gap is taken to hold.
    pub fn firing_high_v(&self) -> f64 {
        self.firing_v * (1.0 + self.band)
    }
}

/// One column's DC network: resistor strings, leakage, protective gaps, node currents.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Network {
    #[serde(serialize_with = "crate::units::from_one")]
    pub column: usize,
    pub name: String,
    /// Resistance of each resistor, Ohm: `resistors_ohm[gap][string]`; `f64::INFINITY` is an
    /// open resistor.
    pub resistors_ohm: Vec<Vec<f64>>,
    /// True when the design gave no resistor value and equal unit resistors stand in (the
    /// division is right, the currents are relative).
    pub relative: bool,
    /// Insulator leakage in parallel with each gap, Ohm, when known.
    pub leakage_ohm: Vec<Option<f64>>,
    pub protective: Vec<ProtectiveGap>,
    /// Current drawn from each node to ground (beam or corona current), A; one per node.
    pub node_current_a: Vec<f64>,
}

/// The state of the network's solved nodes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NetworkSolution {
    /// Node potentials, V, nodes 0 to the gap count.
    pub node_v: Vec<f64>,
    /// Gap voltages, V: node g+1 minus node g.
    pub gap_v: Vec<f64>,
    /// Per protective gap: clamped (fired) in the solution.
    pub fired: Vec<bool>,
    /// Current through each resistor, A: `[gap][string]`, positive from node g+1 to node g.
    pub resistor_current_a: Vec<Vec<f64>>,
    /// Mean current through each protective gap, A (0 when idle), positive from its upper
    /// node to its lower: a clamped gap passes it as a train of sparks.
    pub protective_current_a: Vec<f64>,
    /// Clamp iterations (active-set passes).
    pub iterations: usize,
}

#[derive(Debug, Error, Clone, PartialEq)]
pub enum NetworkError {
    #[error(
        "column {column}: resistor (gap {gap}, string {string}) does not exist; the column has {gaps} gaps and {strings} strings"
    )]
    NoSuchResistor {
        column: usize,
        gap: usize,
        string: usize,
        gaps: usize,
        strings: usize,
    },
    #[error("column {column}: {what} = {value} is not accepted; {accepted}")]
    BadValue {
        column: usize,
        what: String,
        value: f64,
        accepted: String,
    },
    #[error("column {column}: the grading network could not be solved ({why})")]
    Singular { column: usize, why: String },
}

impl Network {
    /// The network of column `column` as the design gives it: `resistor_ohm` per gap in every
    /// string; a protective gap across every `span` gaps when the column has protective gaps;
    /// the insulator leakage of its `leakage` key (from the insulators' materials by default);
    /// the node currents it gives. A column without a resistor value gets equal unit
    /// resistors, and then no leakage or currents (they need absolute values).
    pub fn from_column(model: &Model, column: usize) -> Result<Network, GradingError> {
        let Some(col) = model.columns.get(column) else {
            return Err(GradingError::NoSuchColumn {
                conductor: String::from("(grading network)"),
                column,
                columns: model.columns.len(),
            });
        };
        let gaps = col.electrodes.len() + 1;
        let strings = col.strings.max(1);
        let r = col.resistor_ohm.unwrap_or(1.0);
        let relative = col.resistor_ohm.is_none();
        let protective = col
            .protective_gap
            .map(|p| {
                let span = p.span.max(1);
                (0..gaps / span)
                    .map(|k| ProtectiveGap {
                        from_node: k * span,
                        to_node: ((k + 1) * span).min(gaps),
                        firing_v: p.firing_v,
                        band: p.band,
                    })
                    .collect()
            })
            .unwrap_or_default();
        let leakage_ohm = match col.leakage {
            _ if relative => vec![None; gaps],
            LeakageSpec::None => vec![None; gaps],
            LeakageSpec::PerGap(x) => vec![Some(x); gaps],
            LeakageSpec::FromMaterials => {
                let mut l = leakage::from_materials(model, column).per_gap_ohm;
                l.resize(gaps, None);
                l
            }
        };
        let mut node_current_a = vec![0.0; gaps + 1];
        if !relative {
            for (k, i) in col.node_current_a.iter().enumerate() {
                if let Some(slot) = node_current_a.get_mut(k + 1) {
                    *slot = *i;
                }
            }
        }
        Ok(Network {
            column,
            name: col.name.clone(),
            resistors_ohm: vec![vec![r; strings]; gaps],
            relative,
            leakage_ohm,
            protective,
            node_current_a,
        })
    }

    /// A uniform chain of `gaps` gaps of `strings` parallel strings of `resistor_ohm`.
    pub fn uniform(gaps: usize, strings: usize, resistor_ohm: f64) -> Network {
        Network {
            column: 0,
            name: String::from("chain"),
            resistors_ohm: vec![vec![resistor_ohm; strings.max(1)]; gaps],
            relative: false,
            leakage_ohm: vec![None; gaps],
            protective: Vec::new(),
            node_current_a: vec![0.0; gaps + 1],
        }
    }

    pub fn gaps(&self) -> usize {
        self.resistors_ohm.len()
    }

    pub fn strings(&self) -> usize {
        self.resistors_ohm.first().map_or(0, |s| s.len())
    }

    fn check_resistor(&self, gap: usize, string: usize) -> Result<(), NetworkError> {
        if gap >= self.gaps() || string >= self.strings() {
            return Err(NetworkError::NoSuchResistor {
                column: self.column,
                gap,
                string,
                gaps: self.gaps(),
                strings: self.strings(),
            });
        }
        Ok(())
    }

    /// The same network with one resistor open.
    pub fn with_open(&self, gap: usize, string: usize) -> Result<Network, NetworkError> {
        self.check_resistor(gap, string)?;
        let mut n = self.clone();
        n.resistors_ohm[gap][string] = f64::INFINITY;
        Ok(n)
    }

    /// The same network with one resistor shorted (`SHORT_FRACTION` of its value).
    pub fn with_short(&self, gap: usize, string: usize) -> Result<Network, NetworkError> {
        self.check_resistor(gap, string)?;
        let mut n = self.clone();
        n.resistors_ohm[gap][string] *= SHORT_FRACTION;
        Ok(n)
    }

    /// The same network with every resistor scaled by its factor, `factors[gap][string]`.
    pub fn scaled(&self, factors: &[Vec<f64>]) -> Result<Network, NetworkError> {
        let mut n = self.clone();
        for (g, row) in n.resistors_ohm.iter_mut().enumerate() {
            for (s, r) in row.iter_mut().enumerate() {
                let f = factors
                    .get(g)
                    .and_then(|f| f.get(s))
                    .copied()
                    .unwrap_or(1.0);
                if !(f.is_finite() && f > 0.0) {
                    return Err(NetworkError::BadValue {
                        column: self.column,
                        what: format!("resistor factor (gap {g}, string {s})"),
                        value: f,
                        accepted: "a positive finite factor".to_string(),
                    });
                }
                *r *= f;
            }
        }
        Ok(n)
    }

    /// Conductance of each gap (strings and leakage in parallel), S.
    fn gap_conductance(&self) -> Vec<f64> {
        self.resistors_ohm
            .iter()
            .zip(&self.leakage_ohm)
            .map(|(rs, leak)| {
                rs.iter().map(|r| 1.0 / r).sum::<f64>() + leak.map_or(0.0, |l| 1.0 / l)
            })
            .collect()
    }

    fn validate(&self) -> Result<(), NetworkError> {
        let bad = |what: String, value: f64, accepted: &str| NetworkError::BadValue {
            column: self.column,
            what,
            value,
            accepted: accepted.to_string(),
        };
        if self.gaps() == 0 {
            return Err(bad("gap count".into(), 0.0, "at least one gap"));
        }
        for (g, rs) in self.resistors_ohm.iter().enumerate() {
            for &r in rs {
                if r.is_nan() || r <= 0.0 {
                    return Err(bad(
                        format!("resistor of gap {g}"),
                        r,
                        "a positive value, Ohm",
                    ));
                }
            }
        }
        for (g, l) in self.leakage_ohm.iter().enumerate() {
            if let Some(l) = *l
                && (l.is_nan() || l <= 0.0)
            {
                return Err(bad(
                    format!("leakage of gap {g}"),
                    l,
                    "a positive value, Ohm",
                ));
            }
        }
        if self.node_current_a.len() != self.gaps() + 1
            || self.node_current_a.iter().any(|i| !i.is_finite())
        {
            return Err(bad(
                "node currents".into(),
                self.node_current_a.len() as f64,
                "one finite current per node",
            ));
        }
        for p in &self.protective {
            if p.to_node <= p.from_node || p.to_node > self.gaps() {
                return Err(bad(
                    format!("protective gap span {}..{}", p.from_node, p.to_node),
                    p.to_node as f64,
                    "a span of nodes from < to within the column",
                ));
            }
            if !(p.firing_v.is_finite() && p.firing_v > 0.0) {
                return Err(bad(
                    "protective gap firing".into(),
                    p.firing_v,
                    "a positive voltage",
                ));
            }
            if !(0.0..1.0).contains(&p.band) {
                return Err(bad(
                    "protective gap band".into(),
                    p.band,
                    "a fraction in [0, 1)",
                ));
            }
        }
        Ok(())
    }

    /// Solves the network with its `from` end at `v_from` and its `to` end at `v_to`, V.
    /// Protective gaps are ideal clamps at their nominal firing voltage, found by an active
    /// set: a gap whose span exceeds its firing voltage is clamped; a clamped gap whose current
    /// runs against its voltage is released; repeat until nothing changes.
    pub fn solve(&self, v_from: f64, v_to: f64) -> Result<NetworkSolution, NetworkError> {
        self.validate()?;
        let gaps = self.gaps();
        let g_gap = self.gap_conductance();
        let g_max = g_gap
            .iter()
            .copied()
            .filter(|g| g.is_finite())
            .fold(0.0, f64::max);
        if g_max <= 0.0 {
            return Err(NetworkError::Singular {
                column: self.column,
                why: "no gap conducts".to_string(),
            });
        }
        let g_floor = g_max * FLOOR_FRACTION;
        // The clamp is stiff against the typical gap (the median), not against a shorted one.
        let mut sorted: Vec<f64> = g_gap.iter().copied().filter(|g| *g > 0.0).collect();
        sorted.sort_by(f64::total_cmp);
        let g_typical = sorted.get(sorted.len() / 2).copied().unwrap_or(g_max);
        let g_clamp = g_typical * CLAMP_FACTOR;
        // Per protective gap: None = idle, Some(sign) = clamped at sign·firing.
        let mut active: Vec<Option<f64>> = vec![None; self.protective.len()];
        let max_iter = 4 * self.protective.len() + 8;
        let mut iterations = 0;
        let (node_v, active) = loop {
            iterations += 1;
            let v = self.solve_linear(&g_gap, g_floor, g_clamp, &active, v_from, v_to)?;
            let mut changed = false;
            for (p, a) in self.protective.iter().zip(active.iter_mut()) {
                let dv = v[p.to_node] - v[p.from_node];
                match *a {
                    None if dv.abs() > p.firing_v => {
                        *a = Some(dv.signum());
                        changed = true;
                    }
                    Some(s) if s * (dv - s * p.firing_v) < 0.0 => {
                        *a = None;
                        changed = true;
                    }
                    _ => {}
                }
            }
            if !changed || iterations >= max_iter {
                break (v, active);
            }
        };
        // The clamp branch carries g_clamp (v_to − v_from − s·V_f).
        let protective_current_a = self
            .protective
            .iter()
            .zip(&active)
            .map(|(p, a)| {
                a.map_or(0.0, |s| {
                    g_clamp * (node_v[p.to_node] - node_v[p.from_node] - s * p.firing_v)
                })
            })
            .collect();
        let gap_v: Vec<f64> = (0..gaps).map(|g| node_v[g + 1] - node_v[g]).collect();
        let resistor_current_a = self
            .resistors_ohm
            .iter()
            .zip(&gap_v)
            .map(|(rs, dv)| rs.iter().map(|r| dv / r).collect())
            .collect();
        Ok(NetworkSolution {
            node_v,
            gap_v,
            fired: active.iter().map(Option::is_some).collect(),
            resistor_current_a,
            protective_current_a,
            iterations,
        })
    }

    fn solve_linear(
        &self,
        g_gap: &[f64],
        g_floor: f64,
        g_clamp: f64,
        active: &[Option<f64>],
        v_from: f64,
        v_to: f64,
    ) -> Result<Vec<f64>, NetworkError> {
        let gaps = g_gap.len();
        let nodes = gaps + 1;
        let mut a = nalgebra::DMatrix::<f64>::zeros(nodes, nodes);
        let mut b = nalgebra::DVector::<f64>::zeros(nodes);
        let branch = |a: &mut nalgebra::DMatrix<f64>, i: usize, j: usize, g: f64| {
            a[(i, i)] += g;
            a[(j, j)] += g;
            a[(i, j)] -= g;
            a[(j, i)] -= g;
        };
        for (k, &g) in g_gap.iter().enumerate() {
            // A shorted string can make the conductance huge but finite; an infinite one
            // cannot arise (resistors are positive).
            branch(&mut a, k, k + 1, g + g_floor);
        }
        for (p, s) in self.protective.iter().zip(active) {
            if let Some(s) = *s {
                branch(&mut a, p.from_node, p.to_node, g_clamp);
                // Branch current from `to` to `from` is g_clamp (v_to − v_from − s·V_f).
                b[p.to_node] += g_clamp * s * p.firing_v;
                b[p.from_node] -= g_clamp * s * p.firing_v;
            }
        }
        for (k, &i) in self.node_current_a.iter().enumerate() {
            b[k] -= i;
        }
        // Fixed ends: replace their rows by identities.
        for (k, v) in [(0, v_from), (gaps, v_to)] {
            for j in 0..nodes {
                a[(k, j)] = 0.0;
            }
            a[(k, k)] = 1.0;
            b[k] = v;
        }
        let x = a.lu().solve(&b).ok_or_else(|| NetworkError::Singular {
            column: self.column,
            why: "the conductance matrix is singular".to_string(),
        })?;
        if x.iter().any(|v| !v.is_finite()) {
            return Err(NetworkError::Singular {
                column: self.column,
                why: "a node potential is not finite".to_string(),
            });
        }
        Ok(x.iter().copied().collect())
    }
}
