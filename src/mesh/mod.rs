//! The (r, z) grid: graded tensor-product node lines, node classes, and where grid links cross
//! conductor surfaces and dielectric interfaces.
//!
//! Input: a `model::Model` (geometry and mesh controls). Output: a `Mesh` that the solver turns
//! into a finite-volume operator. The grid is fine (spacing `cell`) across the r and z extent of
//! every conductor, dielectric and vacuum region and grows geometrically (ratio `growth`) away
//! from them up to `max_cell`. Flat faces of shapes become grid lines, so thin plates and flat
//! faces are resolved exactly. A node inside a conductor (or outside a spherical tank) is fixed;
//! for every free node next to a fixed one the true distance to the surface along the link is
//! found by root finding on the signed distance, which is what makes the boundary second order
//! instead of a staircase.
//!
//! Files: `budget` (memory estimate checked before building), `axis` (graded node lines),
//! `classify` (fixed nodes), `cuts` (surface crossings of links, link permittivities), `sites`
//! (nodes beside insulator surfaces); this file holds the types and `Mesh::build`.

mod axis;
mod budget;
mod classify;
mod cuts;
mod sites;

pub use axis::Axis;
use axis::*;
#[cfg(test)]
pub use budget::mem_available;
use budget::*;
pub use budget::{Budget, MESH_BYTES_PER_NODE, MeshEstimate, SOLVER_BYTES_PER_NODE, estimate};
use classify::*;

use crate::geometry::{Point, Shape, crossing};
use crate::model::{Model, Tank, Wall};
use serde::Serialize;
use std::sync::OnceLock;
use thiserror::Error;

/// Meshes built in this process (read by [`builds`]).
static MESH_BUILDS: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);

/// How many meshes this process has built so far: lets a test count the meshes (and so the
/// field solves) a command makes.
pub fn builds() -> usize {
    MESH_BUILDS.load(std::sync::atomic::Ordering::Relaxed)
}

/// What holds a grid node: nothing (a free node, an unknown of the solve), a conductor, or the
/// tank. One `u32` per node (the mesh keeps one per node, so it stays four bytes); read it
/// through [`FixedId::holder`] or the `is_*` methods, never as a number. Serialised as that
/// number (conductor index; 4294967295 the tank).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(transparent)]
#[repr(transparent)]
pub struct FixedId(u32);

/// What a [`FixedId`] stands for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Holder {
    /// A free node (an unknown of the solve).
    Free,
    /// The tank (always at 0 V).
    Tank,
    /// The conductor of this index in `Model::conductors`.
    Conductor(usize),
}

impl FixedId {
    /// The tank (always at 0 V).
    pub const TANK: FixedId = FixedId(u32::MAX);
    /// A free node.
    pub const FREE: FixedId = FixedId(u32::MAX - 1);

    /// The conductor of index `index` (far below `u32::MAX - 1`: a design has a few hundred
    /// conductors at most).
    pub fn conductor(index: usize) -> FixedId {
        debug_assert!(index < (u32::MAX - 1) as usize);
        FixedId(index as u32)
    }

    /// What the id stands for.
    pub fn holder(self) -> Holder {
        match self {
            FixedId::FREE => Holder::Free,
            FixedId::TANK => Holder::Tank,
            FixedId(c) => Holder::Conductor(c as usize),
        }
    }

    /// A free node.
    pub fn is_free(self) -> bool {
        self == FixedId::FREE
    }

    /// The tank.
    pub fn is_tank(self) -> bool {
        self == FixedId::TANK
    }

    /// The conductor index, if a conductor holds the node.
    pub fn conductor_index(self) -> Option<usize> {
        match self.holder() {
            Holder::Conductor(c) => Some(c),
            Holder::Free | Holder::Tank => None,
        }
    }
}

/// A free node; the same as [`FixedId::FREE`].
pub const FREE: FixedId = FixedId::FREE;

#[derive(Debug, Error, Clone, PartialEq)]
pub enum MeshError {
    #[error(
        "conductor '{name}' is thinner than the mesh near (r, z) = ({r_mm:.2} mm, {z_mm:.2} mm): a grid link passes through it without a node inside; set [mesh] cell below {hint_mm:.2} mm or thicken the part"
    )]
    TooThin {
        name: String,
        r_mm: f64,
        z_mm: f64,
        hint_mm: f64,
    },
    #[error(
        "the mesh would have {}{nodes} nodes ({nr} x {nz}) and need about {need_gib:.2} GiB ({solve_gib:.2} GiB for the mesh and the solve, {study_gib:.2} GiB more for the grid study), more than {budget}; set [mesh] cell to at least {suggest_cell_mm:.3} mm (now {cell_mm:.3} mm) or raise max_cell",
        if *exact { "" } else { "at least " }
    )]
    TooLarge {
        nodes: usize,
        nr: usize,
        nz: usize,
        /// False when `nodes` is a lower bound (the count itself was too large to work out).
        exact: bool,
        need_gib: f64,
        solve_gib: f64,
        study_gib: f64,
        /// What the mesh was compared with, in words.
        budget: String,
        cell_mm: f64,
        /// A cell at which the mesh fits.
        suggest_cell_mm: f64,
    },
    #[error("invalid mesh controls: {0}")]
    Controls(String),
}

impl MeshError {
    /// A stable code for the error class.
    pub fn code(&self) -> &'static str {
        match self {
            MeshError::TooThin { .. } => "too-thin",
            MeshError::TooLarge { .. } => "mesh-too-large",
            MeshError::Controls(_) => "mesh-controls",
        }
    }
}

/// Where a grid link from a free node meets a fixed surface.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Cut {
    /// Fraction of the link length from the free node to the surface, in (0, 1].
    pub theta: f64,
    /// What is on the other side (a conductor or the tank).
    pub id: FixedId,
}

/// The cuts of every node, stored only for the nodes that have one (a few per cent of a
/// mesh): 4 bytes per node plus 64 per cut node, instead of 64 per node. Indexing by node gives
/// its four links' cuts, as an array would.
#[derive(Debug, Clone, Default)]
pub struct CutTable {
    /// Per node: its row in `rows`, or `NO_CUTS`.
    slot: Vec<u32>,
    rows: Vec<[Option<Cut>; 4]>,
}

const NO_CUTS: u32 = u32::MAX;
static NO_CUT_ROW: [Option<Cut>; 4] = [None; 4];

impl CutTable {
    fn new(nodes: usize) -> CutTable {
        CutTable {
            slot: vec![NO_CUTS; nodes],
            rows: Vec::new(),
        }
    }

    /// Whether node `k` has a cut on any of its links.
    pub fn has_cuts(&self, k: usize) -> bool {
        self.slot[k] != NO_CUTS
    }

    fn set(&mut self, k: usize, d: Dir, cut: Cut) {
        if self.slot[k] == NO_CUTS {
            self.slot[k] = self.rows.len() as u32;
            self.rows.push([None; 4]);
        }
        self.rows[self.slot[k] as usize][d as usize] = Some(cut);
    }
}

impl std::ops::Index<usize> for CutTable {
    type Output = [Option<Cut>; 4];

    fn index(&self, k: usize) -> &Self::Output {
        match self.slot[k] {
            NO_CUTS => &NO_CUT_ROW,
            s => &self.rows[s as usize],
        }
    }
}

/// Link directions from a node.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dir {
    /// +r
    E = 0,
    /// -r
    W = 1,
    /// +z
    N = 2,
    /// -z
    S = 3,
}

pub const DIRS: [Dir; 4] = [Dir::E, Dir::W, Dir::N, Dir::S];

/// The grid with its node classes, surface cuts and link permittivities.
#[derive(Debug, Clone)]
pub struct Mesh {
    pub(crate) r: Axis,
    pub(crate) z: Axis,
    /// Per node (index `j * nr + i`): free, a conductor, or the tank.
    pub(crate) fixed: Vec<FixedId>,
    /// Per node and direction: the cut, where the link from this free node ends on a surface.
    pub(crate) cuts: CutTable,
    /// Effective relative permittivity of the r-link from node (i, j) to (i + 1, j), per node
    /// index (the last column is unused); for a cut link, over the free part only.
    pub(crate) eps_r_link: Vec<f32>,
    /// As `eps_r_link` for the z-link from (i, j) to (i, j + 1).
    pub(crate) eps_z_link: Vec<f32>,
    /// Relative permittivity at each node (for field evaluation and plots).
    pub(crate) eps_node: Vec<f32>,
    /// ln(r[i+1]/r[i]) for every radial link off the axis (0 for the link from the axis).
    pub(crate) r_log: Vec<f64>,
    /// Number of conductors in the model.
    pub(crate) n_conductors: usize,
    /// Spacing controls used.
    pub(crate) cell: f64,
    /// Where grid links cross the free surface of each dielectric, found on first use (they
    /// depend on the geometry only, so every field on this mesh shares them).
    insulator_sites: OnceLock<Vec<Vec<InsulatorSite>>>,
    /// The one-sided field fit at each of those sites as weights on node potentials (geometry
    /// only, formed by `field` on first use and shared by every field on this mesh).
    insulator_fits: OnceLock<Vec<Vec<Option<SiteFit>>>>,
}

/// The field at a point as a linear map of free-node potentials, E = Σ_k w_k φ_k, with each
/// term (node index, (w_r, w_z)) in V/m per volt.
#[derive(Debug, Clone, PartialEq)]
pub struct SiteFit {
    pub terms: Vec<(u32, [f64; 2])>,
}

/// A point where a grid link crosses the outline of a dielectric on its free surface (not
/// inside a conductor, not against another dielectric), with the point just outside it where
/// the field is read.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InsulatorSite {
    /// The crossing on the dielectric outline.
    pub at: Point,
    /// Outward unit normal of the dielectric there.
    pub normal: Point,
    /// A point 1e-3 of the link length outside, on the gas or vacuum side.
    pub outside: Point,
    /// True when the outer side is a vacuum region.
    pub vacuum_side: bool,
}

impl Mesh {
    pub fn nr(&self) -> usize {
        self.r.len()
    }

    pub fn nz(&self) -> usize {
        self.z.len()
    }

    pub fn nodes(&self) -> usize {
        self.nr() * self.nz()
    }

    pub fn idx(&self, i: usize, j: usize) -> usize {
        j * self.nr() + i
    }

    pub fn point(&self, k: usize) -> Point {
        let nr = self.nr();
        Point::new(self.r.x[k % nr], self.z.x[k / nr])
    }

    /// Number of free nodes (the unknowns of the solve).
    pub fn free_nodes(&self) -> usize {
        self.fixed.iter().filter(|&&f| f.is_free()).count()
    }

    /// Builds the mesh of a model.
    pub fn build(model: &Model) -> Result<Mesh, MeshError> {
        Self::build_with(model, true)
    }

    /// Builds the mesh, optionally without grid lines on flat faces (`snap = false`), which
    /// analytic checks use to put every surface between nodes.
    pub fn build_with(model: &Model, snap: bool) -> Result<Mesh, MeshError> {
        Self::build_within(model, snap, Budget::of_machine())
    }

    /// As [`Mesh::build_with`], refusing the mesh when the run (mesh, solve and grid study)
    /// is estimated to need more than `budget`; the estimate is made before anything the size
    /// of the mesh is allocated.
    pub(crate) fn build_within(
        model: &Model,
        snap: bool,
        budget: Budget,
    ) -> Result<Mesh, MeshError> {
        MESH_BUILDS.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        let spec = model.mesh.clone();
        check_controls(&spec)?;
        let features = Features::of(model, snap);
        let (est, axes) = features.estimate_and_axes(&spec, budget.bytes());
        check_budget(&est, &features, &spec, budget)?;
        let Some((r, z)) = axes else {
            // Grading is skipped only when the lower bound is already over the budget, which
            // `check_budget` has refused.
            return Err(MeshError::Controls(
                "the mesh is too large to grade".to_string(),
            ));
        };
        let nodes = r.len() * z.len();
        let r_log =
            r.x.windows(2)
                .map(|w| if w[0] > 0.0 { (w[1] / w[0]).ln() } else { 0.0 })
                .collect();
        let mut mesh = Mesh {
            fixed: vec![FixedId::FREE; nodes],
            cuts: CutTable::new(nodes),
            eps_r_link: vec![1.0f32; nodes],
            eps_z_link: vec![1.0f32; nodes],
            eps_node: vec![1.0f32; nodes],
            n_conductors: model.conductors.len(),
            r_log,
            cell: spec.cell,
            r,
            z,
            insulator_sites: OnceLock::new(),
            insulator_fits: OnceLock::new(),
        };
        mesh.classify(model);
        mesh.check_every_conductor_has_nodes(model)?;
        mesh.find_cuts(model)?;
        mesh.link_permittivities(model);
        Ok(mesh)
    }

    fn neighbour(&self, k: usize, d: Dir) -> Option<usize> {
        let nr = self.nr();
        let nz = self.nz();
        let (i, j) = (k % nr, k / nr);
        match d {
            Dir::E => (i + 1 < nr).then_some(k + 1),
            Dir::W => (i > 0).then(|| k - 1),
            Dir::N => (j + 1 < nz).then_some(k + nr),
            Dir::S => (j > 0).then(|| k - nr),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bucketed_locate_agrees_with_bisection() {
        let ax = grade_axis(
            0.0,
            1.0,
            &[(0.2, 0.3, 1.0)],
            &[0.25, 0.2, 0.3],
            0.001,
            0.08,
            1.2,
        );
        let bisect = |v: f64| match ax.x.binary_search_by(|a| a.total_cmp(&v)) {
            Ok(i) => i.min(ax.x.len() - 2),
            Err(0) => 0,
            Err(i) => (i - 1).min(ax.x.len() - 2),
        };
        let mut probes: Vec<f64> = ax.x.clone();
        probes.extend(ax.x.windows(2).map(|w| 0.5 * (w[0] + w[1])));
        probes.extend((0..10_000).map(|k| -0.1 + 1.2 * k as f64 / 9_999.0));
        probes.extend([f64::INFINITY, f64::NEG_INFINITY, 1e-300, 1.0 - 1e-16]);
        for v in probes {
            assert_eq!(ax.locate(v), bisect(v), "at {v}");
        }
    }

    #[test]
    fn graded_axis_keeps_fixed_points_and_spacing_limits() {
        let ax = grade_axis(
            0.0,
            1.0,
            &[(0.2, 0.3, 1.0)],
            &[0.25, 0.2, 0.3],
            0.01,
            0.08,
            1.2,
        );
        for f in [0.0, 0.2, 0.25, 0.3, 1.0] {
            assert!(ax.x.iter().any(|&x| (x - f).abs() < 1e-12), "missing {f}");
        }
        let (lo, hi) = ax.spacing_range();
        assert!(lo > 0.005 && hi <= 0.08 * 1.05, "{lo} {hi}");
        // Neighbouring spacings grow by no more than about the growth ratio.
        for w in ax.x.windows(3) {
            let q = (w[2] - w[1]) / (w[1] - w[0]);
            assert!(q < 1.35 && q > 1.0 / 1.35, "ratio {q}");
        }
    }
}
