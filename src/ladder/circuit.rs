//! The ladder as a netlist: capacitors, diodes and node strays over the unknown nodes, with
//! the constant capacitance matrix that the integrator uses.

use super::band::BandMatrix;
use super::params::{Column, LadderParams, Topology};

/// A terminal of a branch.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Term {
    /// Earth (the foot of the smoothing column).
    Ground,
    /// The drive node with sign: +1 is +V(t), −1 is −V(t).
    Source(f64),
    /// Unknown node.
    Node(usize),
}

impl Term {
    pub(crate) fn index(&self) -> Option<usize> {
        match *self {
            Term::Node(i) => Some(i),
            _ => None,
        }
    }

    #[inline]
    pub(crate) fn voltage(&self, v: &[f64], vs: f64) -> f64 {
        match *self {
            Term::Ground => 0.0,
            Term::Source(sign) => sign * vs,
            Term::Node(i) => v[i],
        }
    }
}

/// What a rectifier does in its stage.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum DiodeRole {
    /// s{k−1} → o{k}: charges the oscillating node from the stage below.
    Charging,
    /// o{k} → s{k}: transfers charge to the smoothing node.
    Transfer,
}

#[derive(Debug, Clone)]
pub(crate) struct CapEl {
    /// Upper terminal (the one nearer the terminal); the reported voltage is hi − lo.
    pub hi: Term,
    pub lo: Term,
    pub c: f64,
    pub column: Column,
    pub stage: usize,
}

#[derive(Debug, Clone)]
pub(crate) struct DiodeEl {
    pub anode: Term,
    pub cathode: Term,
    pub column: Column,
    pub role: DiodeRole,
    pub stage: usize,
}

#[derive(Debug, Clone)]
pub(crate) struct Netlist {
    pub nodes: usize,
    pub caps: Vec<CapEl>,
    pub strays: Vec<f64>,
    pub diodes: Vec<DiodeEl>,
    /// Node index of s{k} at position k − 1.
    pub smoothing: Vec<usize>,
    /// Capacitance matrix (stage capacitors and strays).
    pub cmat: BandMatrix,
    /// Source coupling: node charge Q = C·v − w·V(t).
    pub w: Vec<f64>,
}

impl Netlist {
    pub(crate) fn build(p: &LadderParams) -> Self {
        let n = p.stages;
        let per_stage = p.topology.nodes_per_stage();
        // the node order of `params`: per stage the oscillating node(s), then the smoothing one
        let node = |col: Column, k: usize| -> Term {
            match (k, col) {
                (0, Column::Smoothing) => Term::Ground,
                (0, Column::Oscillating) => Term::Source(1.0),
                (0, Column::OscillatingB) => Term::Source(-1.0),
                (_, Column::Oscillating) => Term::Node((k - 1) * per_stage),
                (_, Column::OscillatingB) => Term::Node((k - 1) * per_stage + 1),
                (_, Column::Smoothing) => Term::Node(k * per_stage - 1),
            }
        };
        let osc_cols: Vec<(Column, &Vec<f64>)> = match p.topology {
            Topology::HalfWave => vec![(Column::Oscillating, &p.capacitors.oscillating_f)],
            Topology::Symmetric => vec![
                (Column::Oscillating, &p.capacitors.oscillating_f),
                (Column::OscillatingB, &p.capacitors.oscillating_b_f),
            ],
        };
        let mut caps = Vec::new();
        let mut diodes = Vec::new();
        for k in 1..=n {
            for &(col, values) in &osc_cols {
                caps.push(CapEl {
                    hi: node(col, k),
                    lo: node(col, k - 1),
                    c: values[k - 1],
                    column: col,
                    stage: k,
                });
            }
            caps.push(CapEl {
                hi: node(Column::Smoothing, k),
                lo: node(Column::Smoothing, k - 1),
                c: p.capacitors.smoothing_f[k - 1],
                column: Column::Smoothing,
                stage: k,
            });
            for &(col, _) in &osc_cols {
                diodes.push(DiodeEl {
                    anode: node(Column::Smoothing, k - 1),
                    cathode: node(col, k),
                    column: col,
                    role: DiodeRole::Charging,
                    stage: k,
                });
                diodes.push(DiodeEl {
                    anode: node(col, k),
                    cathode: node(Column::Smoothing, k),
                    column: col,
                    role: DiodeRole::Transfer,
                    stage: k,
                });
            }
        }
        let nodes = p.node_count();
        let mut bw = 0;
        let mut widen = |a: Term, b: Term| {
            if let (Some(i), Some(j)) = (a.index(), b.index()) {
                bw = bw.max(i.abs_diff(j));
            }
        };
        caps.iter().for_each(|c| widen(c.hi, c.lo));
        diodes.iter().for_each(|d| widen(d.anode, d.cathode));
        let mut cmat = BandMatrix::zeros(nodes, bw);
        let mut w = vec![0.0; nodes];
        for c in &caps {
            cmat.stamp(c.hi.index(), c.lo.index(), c.c);
            for (a, b) in [(c.hi, c.lo), (c.lo, c.hi)] {
                if let (Term::Node(i), Term::Source(sign)) = (a, b) {
                    w[i] += sign * c.c;
                }
            }
        }
        for (i, &cs) in p.strays_f.iter().enumerate() {
            cmat.add(i, i, cs);
        }
        let smoothing = (1..=n).map(|k| k * per_stage - 1).collect();
        Self {
            nodes,
            caps,
            strays: p.strays_f.clone(),
            diodes,
            smoothing,
            cmat,
            w,
        }
    }

    /// The terminal node s{n}.
    pub(crate) fn output(&self) -> usize {
        self.smoothing[self.smoothing.len() - 1]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn half_wave_is_pentadiagonal_and_symmetric_heptadiagonal() {
        let hw = LadderParams::uniform(Topology::HalfWave, 5, 1e-9, 1e4, 1e3, 0.0).unwrap();
        let net = Netlist::build(&hw);
        assert_eq!(net.cmat.bandwidth(), 2);
        assert_eq!(net.caps.len(), 10);
        assert_eq!(net.diodes.len(), 10);
        let sy = LadderParams::uniform(Topology::Symmetric, 5, 1e-9, 1e4, 1e3, 0.0).unwrap();
        let net = Netlist::build(&sy);
        assert_eq!(net.cmat.bandwidth(), 3);
        assert_eq!(net.caps.len(), 15);
        assert_eq!(net.diodes.len(), 20);
        assert_eq!(net.output(), 14);
        // the netlist numbering is the documented node order
        for k in 1..=5 {
            for col in [Column::Oscillating, Column::OscillatingB, Column::Smoothing] {
                let i = sy.node_index(col, k).unwrap();
                let label = &sy.node_labels()[i];
                assert_eq!(label, &format!("{}{k}", col.prefix(Topology::Symmetric)));
            }
        }
    }
}
