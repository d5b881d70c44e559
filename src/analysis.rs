//! One field analysis of a model: potentials → mesh → solve → surface and probe fields.
//!
//! Input: a `model::Model` and solver settings. Output: an `Analysis` holding the mesh, the
//! solution and its figures, every surface sample, the per-conductor peaks, the probe values
//! and the electrostatic energy. The grid study (`study`) runs this at several spacings.

use crate::field::{ConductorPeak, FieldMap, PointField, SurfaceSample};
use crate::grading::{self, GradingError};
use crate::mesh::{Mesh, MeshError};
use crate::model::Model;
use crate::solve::{Solution, SolveError, Solver, SolverParams};
use rayon::prelude::*;
use serde::Serialize;
use std::sync::OnceLock;
use thiserror::Error;

#[derive(Debug, Error)]
pub enum AnalysisError {
    #[error(transparent)]
    Grading(#[from] GradingError),
    #[error(transparent)]
    Mesh(#[from] MeshError),
    #[error(transparent)]
    Solve(#[from] SolveError),
    #[error("a computed value is not finite ({what}); the result is withheld")]
    NotFinite { what: String },
}

/// Potential and field at one probe.
#[derive(Debug, Clone, Serialize)]
pub struct ProbeResult {
    pub name: String,
    pub field: PointField,
}

/// The result of one solve of a model.
pub struct Analysis {
    pub mesh: std::sync::Arc<Mesh>,
    pub potentials: Vec<f64>,
    pub solution: Solution,
    pub samples: Vec<SurfaceSample>,
    pub peaks: Vec<ConductorPeak>,
    pub probes: Vec<ProbeResult>,
    /// Electrostatic energy of the solved field, J.
    pub energy_j: f64,
    /// The field at every node of `solution.phi`, formed on first use and kept for every
    /// later field map of the crate (`Analysis::field_map`: the margins, the plots). Whoever
    /// changes `solution.phi` or `potentials` in place empties it (`OnceLock::new()`).
    pub node_fields: OnceLock<Vec<[f64; 2]>>,
}

/// Solves a model once with its own mesh controls.
#[cfg(test)]
pub fn analyze(
    model: &Model,
    params: &SolverParams,
    stage_v: Option<&[f64]>,
) -> Result<Analysis, AnalysisError> {
    analyze_from(model, params, stage_v, None)
}

/// As [`analyze`], the solve started from `start` — a solution of the same design on another
/// grid (its potential interpolated at every node) — where one is given. Only the start
/// changes: the solve meets the same tolerance (the grid study and the accuracy refinement
/// start from the finer or the previous grid's solution).
pub fn analyze_from(
    model: &Model,
    params: &SolverParams,
    stage_v: Option<&[f64]>,
    start: Option<(&Model, &Analysis)>,
) -> Result<Analysis, AnalysisError> {
    let potentials = grading::potentials(model, stage_v)?;
    let mesh = Mesh::build(model)?;
    let guess = start.map(|(m, a)| interpolated(&mesh, m, a));
    analyze_on(model, mesh, potentials, params, guess.as_deref())
}

/// The potential of `from` (solved for `model`) at every node of `mesh`: a start for a solve
/// of the same design on that grid.
pub fn interpolated(mesh: &Mesh, model: &Model, from: &Analysis) -> Vec<f64> {
    let fm = from.field_map(model);
    (0..mesh.nodes())
        .into_par_iter()
        .map(|k| fm.at(mesh.point(k)).potential_v)
        .collect()
}

/// As [`analyze`], on a mesh already built from `model` (with `Mesh::build`), with the
/// electrode potentials already found and the solve started from `start` (the potential at
/// every node, e.g. [`interpolated`]) where one is given.
pub fn analyze_on(
    model: &Model,
    mesh: Mesh,
    potentials: Vec<f64>,
    params: &SolverParams,
    start: Option<&[f64]>,
) -> Result<Analysis, AnalysisError> {
    let mut solver = Solver::new(&mesh, *params);
    let solution = solver.solve(&potentials, start)?;
    let node_fields = OnceLock::new();
    let fm = FieldMap::sharing(&mesh, model, &solution.phi, &potentials, &node_fields);
    let energy_j = fm.energy(&solver.op);
    let (samples, peaks, probes) = field_products(&fm, model)?;
    Ok(Analysis {
        mesh: mesh.into(),
        potentials,
        solution,
        samples,
        peaks,
        probes,
        energy_j,
        node_fields,
    })
}

/// The surface samples, the conductor peaks and the probes of a solved potential, each peak
/// and probe checked to be finite.
type FieldProducts = (Vec<SurfaceSample>, Vec<ConductorPeak>, Vec<ProbeResult>);

fn field_products(fm: &FieldMap, model: &Model) -> Result<FieldProducts, AnalysisError> {
    let samples = fm.surface_samples();
    let peaks = fm.conductor_peaks(&samples);
    let probes = model
        .probes
        .iter()
        .map(|p| ProbeResult {
            name: p.name.clone(),
            field: fm.at(p.at),
        })
        .collect::<Vec<_>>();
    for p in &peaks {
        if !p.peak_surface_field_v_per_m.is_finite() {
            return Err(AnalysisError::NotFinite {
                what: format!("peak surface field of '{}'", p.name),
            });
        }
    }
    for p in &probes {
        if !(p.field.potential_v.is_finite() && p.field.field.iter().all(|v| v.is_finite())) {
            return Err(AnalysisError::NotFinite {
                what: format!("probe '{}'", p.name),
            });
        }
    }
    Ok((samples, peaks, probes))
}

impl Analysis {
    /// The field map of this solution, for `model` (the model it was solved for). The
    /// node-field table is formed once per analysis, however many maps are taken.
    pub(crate) fn field_map<'a>(&'a self, model: &'a Model) -> FieldMap<'a> {
        FieldMap::sharing(
            &self.mesh,
            model,
            &self.solution.phi,
            &self.potentials,
            &self.node_fields,
        )
    }

    /// The analysis of the same mesh with every conductor potential multiplied by `factor`,
    /// without a solve: the field equation is linear and its boundary values all scale, so the
    /// potential scales everywhere and the stored energy by `factor²`. `model` is the design
    /// the scaled potentials belong to (its probes are sampled).
    pub fn scaled(&self, model: &Model, factor: f64) -> Result<Analysis, AnalysisError> {
        let phi: Vec<f64> = self.solution.phi.iter().map(|v| v * factor).collect();
        let potentials: Vec<f64> = self.potentials.iter().map(|v| v * factor).collect();
        let node_fields = OnceLock::new();
        let fm = FieldMap::sharing(&self.mesh, model, &phi, &potentials, &node_fields);
        let (samples, peaks, probes) = field_products(&fm, model)?;
        Ok(Analysis {
            mesh: self.mesh.clone(),
            potentials,
            solution: Solution {
                phi,
                info: self.solution.info.clone(),
            },
            samples,
            peaks,
            probes,
            energy_j: self.energy_j * factor * factor,
            node_fields,
        })
    }
}
