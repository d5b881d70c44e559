//! The capacitance matrix of the electrodes, from unit-potential solves on one mesh.
//!
//! Input: a model and its mesh. Output: the electrode groups (conductors held at the same
//! potential node form one electrode; grounded conductors belong to the tank) and the Maxwell
//! capacitance matrix C, Q = C V, from Gauss's law on each electrode: the charge is the flux
//! of ε∇φ through the links that end on its surface, ε₀·2π·Σ c·(V_surface − φ_node). The
//! operator and the multigrid hierarchy are built once and reused for every unit solve, each
//! warm-started from the previous one. The same basis gives any scenario's field as a weighted
//! sum, which is how the ladder takes its node strays and the fault replay its transients.

use crate::field::EPSILON_0;
use crate::mesh::{DIRS, FixedId, Mesh};
use crate::model::{Model, PotentialSpec};
use crate::solve::{SolveError, Solver, SolverParams};
use serde::Serialize;

/// One electrode: the conductors that share a potential node.
#[derive(Debug, Clone, Serialize)]
pub struct Electrode {
    pub name: String,
    /// Conductor indices.
    pub conductors: Vec<usize>,
}

/// The capacitance matrix and what it was computed from.
#[derive(Debug, Clone, Serialize)]
pub struct CapacitanceMatrix {
    pub electrodes: Vec<Electrode>,
    /// Maxwell capacitance matrix, F: `c_f[i][j]` is the charge on electrode i per volt on
    /// electrode j with every other electrode and the tank grounded.
    pub c_f: Vec<Vec<f64>>,
    /// Largest |C_ij − C_ji| relative to the largest diagonal entry (reciprocity check).
    pub asymmetry: f64,
    /// Total Krylov iterations over all unit solves.
    pub iterations: usize,
}

impl CapacitanceMatrix {
    /// Capacitance of electrode i to the grounded tank and grounded conductors with every
    /// electrode at the same potential (the row sum), F.
    pub fn to_ground(&self, i: usize) -> f64 {
        self.c_f[i].iter().sum()
    }
}

/// Groups conductors by potential node: grounded ones belong to the tank and are left out.
pub fn electrodes(model: &Model) -> Vec<Electrode> {
    let mut groups: Vec<(PotentialSpec, Electrode)> = Vec::new();
    for (k, c) in model.conductors.iter().enumerate() {
        if c.potential == PotentialSpec::Ground {
            continue;
        }
        match groups.iter_mut().find(|(p, _)| *p == c.potential) {
            Some((_, e)) => e.conductors.push(k),
            None => groups.push((
                c.potential.clone(),
                Electrode {
                    name: c.name.clone(),
                    conductors: vec![k],
                },
            )),
        }
    }
    groups.into_iter().map(|(_, e)| e).collect()
}

/// Charge on each conductor for a solved potential, C (the 2π of the revolution included).
///
/// Gauss's law is applied on a closed contour one link away from the surface: the boundary of
/// the regular control volumes of the conductor's fixed nodes and of the free nodes next to it.
/// Between the surface and that contour there is no charge, and the flux through the regular
/// faces, ε·(face area)·Δφ/h between free nodes, is second order for a smooth potential
/// (unlike the flux through the shrunk cells right at the surface, whose faces do not add up
/// to the surface). A contour link that ends on another conductor uses its cut coefficient.
pub fn conductor_charges(mesh: &Mesh, phi: &[f64], potentials: &[f64]) -> Vec<f64> {
    use crate::solve::operator::{Scheme, node_coeffs};
    let n = mesh.nodes();
    let nr = mesh.nr();
    // Owner of each node for the contour: the conductor it is fixed to, or the conductor a
    // free node's cut link reaches (the first found).
    let owner: Vec<FixedId> = (0..n)
        .map(|k| match mesh.fixed[k] {
            FixedId::TANK => FixedId::FREE,
            FixedId::FREE => mesh.cuts[k]
                .iter()
                .flatten()
                .find(|c| !c.id.is_tank())
                .map_or(FixedId::FREE, |c| c.id),
            f => f,
        })
        .collect();
    let mut q = vec![0.0; mesh.n_conductors];
    for k in 0..n {
        let o = owner[k];
        if !mesh.fixed[k].is_free() {
            continue;
        }
        let Some(oc) = o.conductor_index() else {
            continue;
        };
        let reg = node_coeffs(mesh, k, Scheme::Symmetric);
        let (i, j) = (k % nr, k / nr);
        for d in DIRS {
            let di = d as usize;
            let nb = match d {
                crate::mesh::Dir::E => (i + 1 < nr).then_some(k + 1),
                crate::mesh::Dir::W => (i > 0).then(|| k - 1),
                crate::mesh::Dir::N => (j + 1 < mesh.nz()).then_some(k + nr),
                crate::mesh::Dir::S => (j > 0).then(|| k - nr),
            };
            let Some(nbk) = nb else { continue };
            if owner[nbk] == o {
                continue;
            }
            match mesh.cuts[k][di] {
                // The link ends on a surface of another conductor or the tank.
                Some(cut) if cut.id != o => {
                    let v = cut.id.conductor_index().map_or(0.0, |c| potentials[c]);
                    q[oc] += reg.c[di] * (phi[k] - v);
                }
                Some(_) => {}
                None => q[oc] += reg.c[di] * (phi[k] - phi[nbk]),
            }
        }
    }
    for v in &mut q {
        *v *= EPSILON_0 * std::f64::consts::TAU;
    }
    q
}

/// Computes the capacitance matrix by one unit-potential solve per electrode.
pub fn capacitance_matrix(
    model: &Model,
    mesh: &Mesh,
    params: &SolverParams,
) -> Result<CapacitanceMatrix, SolveError> {
    let groups = electrodes(model);
    let n = groups.len();
    let mut solver = Solver::new(mesh, *params);
    let mut c_f = vec![vec![0.0; n]; n];
    let mut iterations = 0;
    for (j, g) in groups.iter().enumerate() {
        let mut pots = vec![0.0; model.conductors.len()];
        for &k in &g.conductors {
            pots[k] = 1.0;
        }
        let sol = solver.solve(&pots, None)?;
        iterations += sol.info.iterations;
        let q = conductor_charges(mesh, &sol.phi, &pots);
        for (i, gi) in groups.iter().enumerate() {
            c_f[i][j] = gi.conductors.iter().map(|&k| q[k]).sum();
        }
    }
    let scale = (0..n).map(|i| c_f[i][i].abs()).fold(0.0, f64::max);
    let mut asymmetry: f64 = 0.0;
    for (i, row) in c_f.iter().enumerate() {
        for (j, &cij) in row.iter().enumerate().take(i) {
            asymmetry = asymmetry.max((cij - c_f[j][i]).abs());
        }
    }
    Ok(CapacitanceMatrix {
        electrodes: groups,
        c_f,
        asymmetry: if scale > 0.0 { asymmetry / scale } else { 0.0 },
        iterations,
    })
}
