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
use serde::Serialize;
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
    pub mesh: Mesh,
    pub potentials: Vec<f64>,
    pub solution: Solution,
    pub samples: Vec<SurfaceSample>,
    pub peaks: Vec<ConductorPeak>,
    pub probes: Vec<ProbeResult>,
    /// Electrostatic energy of the solved field, J.
    pub energy_j: f64,
}

/// Solves a model once with its own mesh controls.
pub fn analyze(
    model: &Model,
    params: &SolverParams,
    stage_v: Option<&[f64]>,
) -> Result<Analysis, AnalysisError> {
    let potentials = grading::potentials(model, stage_v)?;
    let mesh = Mesh::build(model)?;
    analyze_on(model, mesh, potentials, params)
}

/// As [`analyze`], on a mesh already built from `model` (with `Mesh::build`) and with the
/// electrode potentials already found.
pub fn analyze_on(
    model: &Model,
    mesh: Mesh,
    potentials: Vec<f64>,
    params: &SolverParams,
) -> Result<Analysis, AnalysisError> {
    let mut solver = Solver::new(&mesh, *params);
    let solution = solver.solve(&potentials, None)?;
    let fm = FieldMap::new(&mesh, model, &solution.phi, &potentials);
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
    let energy_j = fm.energy(&solver.op);
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

    Ok(Analysis {
        mesh,
        potentials,
        solution,
        samples,
        peaks,
        probes,
        energy_j,
    })
}
