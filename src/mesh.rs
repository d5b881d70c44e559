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

use crate::geometry::{Point, Shape, crossing};
use crate::model::{Model, Tank, Wall};
use serde::Serialize;
use std::sync::OnceLock;
use thiserror::Error;

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

/// The tank (always at 0 V); the same as [`FixedId::TANK`].
pub const TANK: FixedId = FixedId::TANK;
/// A free node; the same as [`FixedId::FREE`].
pub const FREE: FixedId = FixedId::FREE;

/// Largest number of grid nodes a mesh may have where the machine's available memory cannot be
/// read (no `/proc/meminfo`).
pub const MAX_NODES: usize = 40_000_000;

/// Bytes the field solve holds per grid node: operator, multigrid hierarchy and Krylov vectors
/// (measured on the benchmark problems, `SolveInfo::memory_bytes` / nodes: 159 at 4 M nodes;
/// rounded up for smaller and less regular meshes).
pub const SOLVER_BYTES_PER_NODE: usize = 180;

/// Bytes the mesh itself holds per grid node: node class, cut slot, three permittivities
/// (single precision: ε_r values carry far fewer figures than that), and
/// the cut rows with an allowance of one node in four next to a surface (meshes of the
/// examples have far fewer).
pub const MESH_BYTES_PER_NODE: usize = std::mem::size_of::<FixedId>()
    + std::mem::size_of::<u32>()
    + std::mem::size_of::<[Option<Cut>; 4]>() / 4
    + 3 * std::mem::size_of::<f32>();

/// The grid study's two coarser meshes (spacing ratio sqrt 2, so about 1/2 and 1/4 of the
/// nodes) need together about this fraction of the fine mesh and its solve.
pub const GRID_STUDY_SHARE: f64 = 0.75;

/// Fraction of the machine's available memory that a run plans to use; the rest is left for
/// the surface samples, the report and the other processes.
pub const MEMORY_HEADROOM: f64 = 0.8;

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

/// What a mesh and its solve may use.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Budget {
    /// Bytes of memory available to the run.
    Memory { available_bytes: u64 },
    /// A fixed node count, where the available memory is not known.
    Nodes { limit: usize },
}

impl Budget {
    /// The budget of this machine: `MemAvailable` from `/proc/meminfo` where it can be read,
    /// otherwise [`MAX_NODES`].
    pub fn of_machine() -> Budget {
        std::fs::read_to_string("/proc/meminfo")
            .ok()
            .and_then(|t| mem_available(&t))
            .map_or(Budget::Nodes { limit: MAX_NODES }, |available_bytes| {
                Budget::Memory { available_bytes }
            })
    }

    /// Largest bytes a run may plan for (fine mesh, solve and grid study).
    pub fn bytes(&self) -> f64 {
        match *self {
            Budget::Memory { available_bytes } => available_bytes as f64 * MEMORY_HEADROOM,
            Budget::Nodes { limit } => limit as f64 * run_bytes_per_node(),
        }
    }

    /// The budget in words, for messages.
    pub fn describe(&self) -> String {
        match *self {
            Budget::Memory { available_bytes } => format!(
                "{:.0}% of the {:.2} GiB of memory available",
                MEMORY_HEADROOM * 100.0,
                available_bytes as f64 / GIB
            ),
            Budget::Nodes { limit } => {
                format!("the limit of {limit} nodes (the available memory could not be read)")
            }
        }
    }
}

/// `MemAvailable` of a `/proc/meminfo` text, in bytes.
pub fn mem_available(meminfo: &str) -> Option<u64> {
    meminfo.lines().find_map(|l| {
        let rest = l.strip_prefix("MemAvailable:")?;
        let mut words = rest.split_whitespace();
        let n: u64 = words.next()?.parse().ok()?;
        match words.next() {
            Some("kB") | None => n.checked_mul(1024),
            _ => None,
        }
    })
}

const GIB: f64 = (1u64 << 30) as f64;

/// Bytes per fine-mesh node of a whole run: the mesh, its solve, and the grid study.
fn run_bytes_per_node() -> f64 {
    (MESH_BYTES_PER_NODE + SOLVER_BYTES_PER_NODE) as f64 * (1.0 + GRID_STUDY_SHARE)
}

/// The size of a mesh, worked out before any of it is allocated.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MeshEstimate {
    pub nr: usize,
    pub nz: usize,
    pub nodes: usize,
    /// False when the counts are lower bounds (the grid would be too large to grade).
    pub exact: bool,
    /// Bytes of the mesh and its solve.
    pub mesh_and_solve_bytes: f64,
    /// Bytes the grid study adds.
    pub grid_study_bytes: f64,
}

impl MeshEstimate {
    fn of(nr: usize, nz: usize, exact: bool) -> MeshEstimate {
        let nodes = nr.saturating_mul(nz);
        let solve = nodes as f64 * (MESH_BYTES_PER_NODE + SOLVER_BYTES_PER_NODE) as f64;
        MeshEstimate {
            nr,
            nz,
            nodes,
            exact,
            mesh_and_solve_bytes: solve,
            grid_study_bytes: solve * GRID_STUDY_SHARE,
        }
    }

    pub fn total_bytes(&self) -> f64 {
        self.mesh_and_solve_bytes + self.grid_study_bytes
    }
}

/// Estimates the mesh of a model (node counts and bytes) without building it. The counts are
/// exact unless a lower bound already exceeds `budget` (then `exact` is false).
pub fn estimate(model: &Model, budget: Budget) -> Result<MeshEstimate, MeshError> {
    check_controls(&model.mesh)?;
    let f = Features::of(model, true);
    Ok(f.estimate(&model.mesh, budget.bytes()))
}

/// Refuses a mesh whose run would not fit `budget`, with a cell at which it would.
fn check_budget(
    est: &MeshEstimate,
    f: &Features,
    spec: &crate::model::MeshSpec,
    budget: Budget,
) -> Result<(), MeshError> {
    let limit = budget.bytes();
    if est.total_bytes() <= limit {
        return Ok(());
    }
    // Nodes go about as 1/cell^2 near the features; step the cell up until the estimate fits.
    let mut cell = spec.cell;
    let mut need = est.total_bytes();
    for _ in 0..60 {
        cell *= ((need / limit).sqrt() * 1.05).max(1.05);
        let trial = crate::model::MeshSpec {
            cell,
            max_cell: spec.max_cell.max(cell),
            ..spec.clone()
        };
        need = f.estimate(&trial, limit).total_bytes();
        if need <= limit {
            break;
        }
    }
    Err(MeshError::TooLarge {
        nodes: est.nodes,
        nr: est.nr,
        nz: est.nz,
        exact: est.exact,
        need_gib: est.total_bytes() / GIB,
        solve_gib: est.mesh_and_solve_bytes / GIB,
        study_gib: est.grid_study_bytes / GIB,
        budget: budget.describe(),
        cell_mm: spec.cell * 1e3,
        suggest_cell_mm: cell * 1e3,
    })
}

fn check_controls(spec: &crate::model::MeshSpec) -> Result<(), MeshError> {
    if !(spec.cell > 0.0 && spec.cell.is_finite()) {
        return Err(MeshError::Controls(format!(
            "cell must be positive, got {} m",
            spec.cell
        )));
    }
    if !(spec.growth >= 1.0 && spec.growth.is_finite()) {
        return Err(MeshError::Controls(format!(
            "growth must be at least 1, got {}",
            spec.growth
        )));
    }
    if spec.max_cell.is_nan() {
        return Err(MeshError::Controls("max_cell is not a number".into()));
    }
    Ok(())
}

/// A stretch of one axis where the spacing is at most `frac × cell`: (lo, hi, frac).
type Band = (f64, f64, f64);

/// Extents of the features (fine spacing, each with its fraction of the cell) and the fixed
/// grid lines of a model.
struct Features {
    dom: crate::geometry::BBox,
    r_feat: Vec<Band>,
    z_feat: Vec<Band>,
    r_fix: Vec<f64>,
    z_fix: Vec<f64>,
}

impl Features {
    fn of(model: &Model, snap: bool) -> Features {
        let dom = model.tank.bbox();
        let spec = &model.mesh;
        let mut r_feat = Vec::new();
        let mut z_feat = Vec::new();
        let mut r_fix = vec![dom.r_min, dom.r_max];
        let mut z_fix = vec![dom.z_min, dom.z_max];
        let floor = 1.0 / crate::model::MAX_LOCAL_DIVISION;
        let conductors = model.conductors.iter().map(|c| &c.shape).enumerate();
        for (k, s) in conductors {
            let refine = spec.refinement(k).clamp(floor, 1.0);
            let b = s.bbox();
            r_feat.push((b.r_min, b.r_max, refine));
            z_feat.push((b.z_min, b.z_max, refine));
            if spec.adaptive() {
                // Curved parts: `cells_per_radius` cells per radius of curvature.
                let start = 1.0 / crate::model::START_DIVISION;
                for (part, radius) in s.curved_parts() {
                    let frac = (radius / (spec.cells_per_radius * spec.cell)).clamp(start, 1.0);
                    let frac = (frac * refine).max(floor);
                    r_feat.push((part.r_min, part.r_max, frac));
                    z_feat.push((part.z_min, part.z_max, frac));
                }
            }
        }
        let others = model
            .dielectrics
            .iter()
            .map(|d| &d.shape)
            .chain(model.vacuum.iter().map(|v| &v.shape));
        for s in others {
            let b = s.bbox();
            r_feat.push((b.r_min, b.r_max, 1.0));
            z_feat.push((b.z_min, b.z_max, 1.0));
        }
        if snap {
            let shapes = model
                .conductors
                .iter()
                .map(|c| &c.shape)
                .chain(model.dielectrics.iter().map(|d| &d.shape))
                .chain(model.vacuum.iter().map(|v| &v.shape));
            for s in shapes {
                let (hr, hz) = s.grid_hints();
                r_fix.extend(hr);
                z_fix.extend(hz);
            }
        }
        if let Tank::Sphere { inner_radius } = model.tank {
            // The whole sphere wall is a surface: fine everywhere near it is not affordable in
            // a tensor grid, so the wall gets the spacing of its extent.
            r_feat.push((0.0, inner_radius, 1.0));
            z_feat.push((0.0, 2.0 * inner_radius, 1.0));
            z_fix.push(inner_radius);
        }
        Features {
            dom,
            r_feat,
            z_feat,
            r_fix,
            z_fix,
        }
    }

    /// Node counts of the grid `spec` would give: exact (the axes are graded, which allocates
    /// only the two node lines) unless a lower bound already exceeds `limit_bytes`.
    fn estimate(&self, spec: &crate::model::MeshSpec, limit_bytes: f64) -> MeshEstimate {
        self.estimate_and_axes(spec, limit_bytes).0
    }

    /// As `estimate`, also returning the graded axes when they were made.
    fn estimate_and_axes(
        &self,
        spec: &crate::model::MeshSpec,
        limit_bytes: f64,
    ) -> (MeshEstimate, Option<(Axis, Axis)>) {
        let max_cell = spec.max_cell.max(spec.cell);
        let lr = axis_lower_bound(
            self.dom.r_min,
            self.dom.r_max,
            &self.r_feat,
            spec.cell,
            max_cell,
        );
        let lz = axis_lower_bound(
            self.dom.z_min,
            self.dom.z_max,
            &self.z_feat,
            spec.cell,
            max_cell,
        );
        let n = |x: f64| x.min(1e15) as usize;
        let lower = MeshEstimate::of(n(lr), n(lz), false);
        if lower.total_bytes() > limit_bytes {
            return (lower, None);
        }
        let (r, z) = self.axes(spec);
        (MeshEstimate::of(r.len(), z.len(), true), Some((r, z)))
    }

    fn axes(&self, spec: &crate::model::MeshSpec) -> (Axis, Axis) {
        let max_cell = spec.max_cell.max(spec.cell);
        let r = grade_axis(
            self.dom.r_min,
            self.dom.r_max,
            &self.r_feat,
            &self.r_fix,
            spec.cell,
            max_cell,
            spec.growth,
        );
        let z = grade_axis(
            self.dom.z_min,
            self.dom.z_max,
            &self.z_feat,
            &self.z_fix,
            spec.cell,
            max_cell,
            spec.growth,
        );
        (r, z)
    }
}

/// A lower bound on the nodes of a graded axis on [a, b]: the union of the feature extents
/// at the coarsest spacing any of them asks for, the rest at `max_cell`, plus the end node.
fn axis_lower_bound(a: f64, b: f64, feats: &[Band], cell: f64, max_cell: f64) -> f64 {
    let mut iv: Vec<(f64, f64)> = feats
        .iter()
        .map(|&(lo, hi, _)| (lo.max(a), hi.min(b)))
        .filter(|(lo, hi)| lo < hi)
        .collect();
    let frac = feats.iter().map(|f| f.2).fold(0.0f64, f64::max).max(1e-3);
    iv.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut covered = 0.0;
    let mut end = f64::NEG_INFINITY;
    for (lo, hi) in iv {
        let lo = lo.max(end);
        if hi > lo {
            covered += hi - lo;
            end = hi;
        }
    }
    let rest = ((b - a) - covered).max(0.0);
    covered / (frac * cell).min(max_cell) + rest / max_cell + 1.0
}

/// One direction of the grid: node coordinates, increasing.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Axis {
    pub x: Vec<f64>,
    /// For an even split of [x₀, x_last] into buckets, the cell of each bucket's start, so
    /// that `locate` walks a step or two instead of bisecting.
    #[serde(skip)]
    buckets: Vec<u32>,
    /// Buckets per metre.
    #[serde(skip)]
    per_m: f64,
}

/// Buckets per grid line of an axis.
const BUCKETS_PER_LINE: usize = 4;

impl Axis {
    /// An axis through the increasing coordinates `x`.
    pub fn new(x: Vec<f64>) -> Axis {
        let n = x.len();
        let span = if n >= 2 { x[n - 1] - x[0] } else { 0.0 };
        if n < 2 || span.is_nan() || span <= 0.0 {
            return Axis {
                x,
                buckets: Vec::new(),
                per_m: 0.0,
            };
        }
        let nb = BUCKETS_PER_LINE * n;
        let per_m = nb as f64 / span;
        let mut buckets = Vec::with_capacity(nb + 1);
        let mut i = 0usize;
        for b in 0..=nb {
            let v = x[0] + b as f64 / per_m;
            while i + 1 < n && x[i + 1] <= v {
                i += 1;
            }
            buckets.push(i as u32);
        }
        Axis { x, buckets, per_m }
    }

    pub fn len(&self) -> usize {
        self.x.len()
    }

    pub fn is_empty(&self) -> bool {
        self.x.is_empty()
    }

    /// Index of the last node at or below `v` (clamped to the axis).
    pub fn locate(&self, v: f64) -> usize {
        let n = self.x.len();
        if !self.buckets.is_empty() && v.is_finite() {
            if v <= self.x[0] {
                return 0;
            }
            let b = (((v - self.x[0]) * self.per_m) as usize).min(self.buckets.len() - 1);
            // The bucket start may round either way: step back, then forward.
            let mut i = self.buckets[b] as usize;
            while i > 0 && self.x[i] > v {
                i -= 1;
            }
            while i + 1 < n && self.x[i + 1] <= v {
                i += 1;
            }
            return i.min(n.saturating_sub(2));
        }
        match self.x.binary_search_by(|a| a.total_cmp(&v)) {
            Ok(i) => i.min(self.x.len().saturating_sub(2)),
            Err(0) => 0,
            Err(i) => (i - 1).min(self.x.len().saturating_sub(2)),
        }
    }

    /// Smallest and largest spacing.
    pub fn spacing_range(&self) -> (f64, f64) {
        let mut lo = f64::INFINITY;
        let mut hi: f64 = 0.0;
        for w in self.x.windows(2) {
            let h = w[1] - w[0];
            lo = lo.min(h);
            hi = hi.max(h);
        }
        (lo, hi)
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

    fn set(&mut self, k: usize, d: Dir, cut: Cut) {
        if self.slot[k] == NO_CUTS {
            self.slot[k] = self.rows.len() as u32;
            self.rows.push([None; 4]);
        }
        self.rows[self.slot[k] as usize][d as usize] = Some(cut);
    }

    /// Nodes with at least one cut link.
    pub fn cut_nodes(&self) -> usize {
        self.rows.len()
    }

    /// Bytes held.
    pub fn bytes(&self) -> usize {
        self.slot.len() * 4 + self.rows.len() * std::mem::size_of::<[Option<Cut>; 4]>()
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
    pub r: Axis,
    pub z: Axis,
    /// Per node (index `j * nr + i`): free, a conductor, or the tank.
    pub fixed: Vec<FixedId>,
    /// Per node and direction: the cut, where the link from this free node ends on a surface.
    pub cuts: CutTable,
    /// Effective relative permittivity of the r-link from node (i, j) to (i + 1, j), per node
    /// index (the last column is unused); for a cut link, over the free part only.
    pub eps_r_link: Vec<f32>,
    /// As `eps_r_link` for the z-link from (i, j) to (i, j + 1).
    pub eps_z_link: Vec<f32>,
    /// Relative permittivity at each node (for field evaluation and plots).
    pub eps_node: Vec<f32>,
    /// ln(r[i+1]/r[i]) for every radial link off the axis (0 for the link from the axis).
    pub r_log: Vec<f64>,
    /// Number of conductors in the model.
    pub n_conductors: usize,
    /// Spacing controls used.
    pub cell: f64,
    /// Where grid links cross the free surface of each dielectric, found on first use (they
    /// depend on the geometry only, so every field on this mesh shares them).
    insulator_sites: OnceLock<Vec<Vec<InsulatorSite>>>,
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

    /// The free-surface sites of dielectric `index` of `model` (the model this mesh was built
    /// from), computed for every dielectric on first use.
    pub fn insulator_sites(&self, model: &Model, index: usize) -> &[InsulatorSite] {
        let all = self.insulator_sites.get_or_init(|| {
            (0..model.dielectrics.len())
                .map(|d| self.find_insulator_sites(model, d))
                .collect()
        });
        all.get(index).map_or(&[], |v| v.as_slice())
    }

    fn find_insulator_sites(&self, model: &Model, index: usize) -> Vec<InsulatorSite> {
        let Some(diel) = model.dielectrics.get(index) else {
            return Vec::new();
        };
        let sdf = |p: Point| diel.shape.sdf(p);
        let (nr, nz) = (self.nr(), self.nz());
        let mut out = Vec::new();
        for j in 0..nz {
            for i in 0..nr {
                let a = self.point(self.idx(i, j));
                let sa = sdf(a);
                for (di, dj) in [(1usize, 0usize), (0, 1)] {
                    if i + di >= nr || j + dj >= nz {
                        continue;
                    }
                    let b = self.point(self.idx(i + di, j + dj));
                    let sb = sdf(b);
                    if (sa <= 0.0) == (sb <= 0.0) {
                        continue;
                    }
                    let (outside, inside) = if sa > 0.0 { (a, b) } else { (b, a) };
                    let h = (b.r - a.r).abs() + (b.z - a.z).abs();
                    let t = crate::geometry::crossing(sdf, outside, inside, 1e-9 * h);
                    let p = Point::new(
                        outside.r + t * (inside.r - outside.r),
                        outside.z + t * (inside.z - outside.z),
                    );
                    let n = diel.shape.normal(p);
                    if n.r == 0.0 && n.z == 0.0 {
                        continue;
                    }
                    let off = 1e-3 * h;
                    let q = Point::new((p.r + off * n.r).max(0.0), p.z + off * n.z);
                    if model.tank.sdf_inside(q) >= 0.0
                        || model
                            .conductors
                            .iter()
                            .any(|c| c.shape.contains(p) || c.shape.contains(q))
                        || model
                            .dielectrics
                            .iter()
                            .enumerate()
                            .any(|(o, d)| o != index && d.shape.contains(q))
                    {
                        continue;
                    }
                    out.push(InsulatorSite {
                        at: p,
                        normal: n,
                        outside: q,
                        vacuum_side: model.vacuum.iter().any(|v| v.shape.contains(q)),
                    });
                }
            }
        }
        out
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
    pub fn build_within(model: &Model, snap: bool, budget: Budget) -> Result<Mesh, MeshError> {
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
        };
        mesh.classify(model);
        mesh.check_every_conductor_has_nodes(model)?;
        mesh.find_cuts(model)?;
        mesh.link_permittivities(model);
        Ok(mesh)
    }

    /// Marks nodes inside conductors and outside the tank.
    fn classify(&mut self, model: &Model) {
        let nr = self.nr();
        let nz = self.nz();
        // Tank walls.
        match model.tank {
            Tank::Cylinder { .. } => {
                if model.side == Wall::Grounded {
                    for j in 0..nz {
                        self.fixed[j * nr + nr - 1] = FixedId::TANK;
                    }
                }
                if model.ends == Wall::Grounded {
                    for i in 0..nr {
                        self.fixed[i] = FixedId::TANK;
                        self.fixed[(nz - 1) * nr + i] = FixedId::TANK;
                    }
                }
            }
            Tank::Sphere { .. } => {
                for j in 0..nz {
                    for i in 0..nr {
                        let p = Point::new(self.r.x[i], self.z.x[j]);
                        if model.tank.sdf_inside(p) >= -1e-6 * self.cell {
                            self.fixed[j * nr + i] = FixedId::TANK;
                        }
                    }
                }
            }
        }
        // Conductors: only the nodes inside each bounding box are tested.
        let on_surface = 1e-6 * self.cell;
        for (c, cond) in model.conductors.iter().enumerate() {
            let b = cond.shape.bbox();
            let (i0, i1) = index_range(&self.r, b.r_min, b.r_max);
            let (j0, j1) = index_range(&self.z, b.z_min, b.z_max);
            for j in j0..=j1 {
                for i in i0..=i1 {
                    let k = j * nr + i;
                    // A node within a millionth of a cell of the surface is taken as on
                    // it, which keeps every cut link at a well-conditioned length.
                    if self.fixed[k].is_free()
                        && cond.shape.sdf(Point::new(self.r.x[i], self.z.x[j])) <= on_surface
                    {
                        self.fixed[k] = FixedId::conductor(c);
                    }
                }
            }
        }
    }

    /// A conductor that holds no grid node has no cut links either, so the solve would not
    /// see it at all: refuse it, with a cell small enough to put nodes inside it.
    fn check_every_conductor_has_nodes(&self, model: &Model) -> Result<(), MeshError> {
        let mut held = vec![false; model.conductors.len()];
        for &f in &self.fixed {
            if let Some(h) = f.conductor_index().and_then(|c| held.get_mut(c)) {
                *h = true;
            }
        }
        let Some(c) = held.iter().position(|h| !h) else {
            return Ok(());
        };
        let cond = &model.conductors[c];
        let (at, depth) = deepest_point(&cond.shape, self.cell);
        Err(MeshError::TooThin {
            name: cond.name.clone(),
            r_mm: at.r * 1e3,
            z_mm: at.z * 1e3,
            hint_mm: depth.min(0.5 * self.cell) * 1e3,
        })
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

    /// Finds where links from free nodes meet fixed surfaces, and refuses conductors that a
    /// link jumps over.
    fn find_cuts(&mut self, model: &Model) -> Result<(), MeshError> {
        let tol = 1e-9 * self.cell.max(1e-6);
        for k in 0..self.nodes() {
            if !self.fixed[k].is_free() {
                continue;
            }
            let p = self.point(k);
            for d in DIRS {
                let Some(q) = self.neighbour(k, d) else {
                    continue;
                };
                let id = self.fixed[q];
                if id.is_free() {
                    continue;
                }
                let qp = self.point(q);
                let theta = if id.is_tank() {
                    match model.tank {
                        // Cylinder walls lie on grid lines.
                        Tank::Cylinder { .. } => 1.0,
                        Tank::Sphere { .. } => crossing(|x| -model.tank.sdf_inside(x), p, qp, tol),
                    }
                } else {
                    let Some(c) = id.conductor_index() else {
                        continue;
                    };
                    let shape: &Shape = &model.conductors[c].shape;
                    crossing(|x| shape.sdf(x), p, qp, tol)
                };
                // A node a hair's breadth from the surface would make a near-singular row:
                // such a tiny gap is resolved as the node sitting on the surface.
                let theta = theta.clamp(1e-6, 1.0);
                self.cuts.set(k, d, Cut { theta, id });
            }
        }
        // Links with both ends free must not pass through a conductor.
        let nr = self.nr();
        for cond in &model.conductors {
            let b = cond.shape.bbox();
            let (i0, i1) = index_range(&self.r, b.r_min, b.r_max);
            let (j0, j1) = index_range(&self.z, b.z_min, b.z_max);
            let i0 = i0.saturating_sub(1);
            let j0 = j0.saturating_sub(1);
            for j in j0..=j1 {
                for i in i0..=i1 {
                    let k = j * nr + i;
                    if !self.fixed[k].is_free() {
                        continue;
                    }
                    for (q, mid) in [
                        (
                            (i + 1 < nr).then_some(k + 1),
                            (i + 1 < nr).then(|| {
                                Point::new(0.5 * (self.r.x[i] + self.r.x[i + 1]), self.z.x[j])
                            }),
                        ),
                        (
                            (j + 1 < self.nz()).then_some(k + nr),
                            (j + 1 < self.nz()).then(|| {
                                Point::new(self.r.x[i], 0.5 * (self.z.x[j] + self.z.x[j + 1]))
                            }),
                        ),
                    ] {
                        // A link may clip a shallow cap of a curved body (its depth is
                        // second order in the spacing); a part that reaches a tenth of the
                        // link deep between two free nodes is not resolved.
                        if let (Some(q), Some(mid)) = (q, mid)
                            && self.fixed[q].is_free()
                            && cond.shape.sdf(mid) < -0.1 * link_len(self, k, q)
                        {
                            return Err(MeshError::TooThin {
                                name: cond.name.clone(),
                                r_mm: mid.r * 1e3,
                                z_mm: mid.z * 1e3,
                                // Half the thickness: the smaller of the bounding box's and
                                // the sampled depth (a slanted part is thin across, not along
                                // the axes).
                                hint_mm: (0.5 * thickness_hint(&cond.shape))
                                    .min(deepest_point(&cond.shape, self.cell).1)
                                    * 1e3,
                            });
                        }
                    }
                }
            }
        }
        Ok(())
    }

    /// Effective permittivity of each link: the harmonic mean along the link (series layers),
    /// averaged over the two halves of the control-volume face (parallel layers), so that
    /// interfaces both across and along a link are placed where they truly are.
    fn link_permittivities(&mut self, model: &Model) {
        let nr = self.nr();
        let nz = self.nz();
        for k in 0..self.nodes() {
            self.eps_node[k] = model.eps_r_at(self.point(k)) as f32;
        }
        if model.dielectrics.is_empty() {
            return;
        }
        for j in 0..nz {
            for i in 0..nr {
                let k = j * nr + i;
                let p = self.point(k);
                // r-link to (i+1, j).
                if i + 1 < nr {
                    let q = Point::new(self.r.x[i + 1], p.z);
                    let (a, b) = self.free_part(k, k + 1, Dir::E, Dir::W, p, q);
                    let zs = self.z.x[j.saturating_sub(1)];
                    let zn = self.z.x[(j + 1).min(nz - 1)];
                    let lo = 0.25 * (zs - p.z);
                    let hi = 0.25 * (zn - p.z);
                    let wl = (p.z - zs) * 0.5;
                    let wh = (zn - p.z) * 0.5;
                    let el = series_eps(model, shift(a, 0.0, lo), shift(b, 0.0, lo));
                    let eh = series_eps(model, shift(a, 0.0, hi), shift(b, 0.0, hi));
                    self.eps_r_link[k] = weighted(el, wl, eh, wh) as f32;
                }
                // z-link to (i, j+1).
                if j + 1 < nz {
                    let q = Point::new(p.r, self.z.x[j + 1]);
                    let (a, b) = self.free_part(k, k + nr, Dir::N, Dir::S, p, q);
                    let rw = if i > 0 { self.r.x[i - 1] } else { p.r };
                    let re = self.r.x[(i + 1).min(nr - 1)];
                    let mw = 0.5 * (rw + p.r);
                    let me = 0.5 * (re + p.r);
                    // Face halves are annuli: weight by their areas.
                    let ww = p.r * p.r - mw * mw;
                    let we = me * me - p.r * p.r;
                    let ew = series_eps(
                        model,
                        shift(a, 0.5 * (mw - p.r), 0.0),
                        shift(b, 0.5 * (mw - p.r), 0.0),
                    );
                    let ee = series_eps(
                        model,
                        shift(a, 0.5 * (me - p.r), 0.0),
                        shift(b, 0.5 * (me - p.r), 0.0),
                    );
                    self.eps_z_link[k] = weighted(ew, ww.abs(), ee, we.abs()) as f32;
                }
            }
        }
    }

    /// The free stretch of the link between nodes `k` and `q`: the whole link, or the part from
    /// the free node to the surface when the other end is fixed.
    fn free_part(
        &self,
        k: usize,
        q: usize,
        dk: Dir,
        dq: Dir,
        p: Point,
        qp: Point,
    ) -> (Point, Point) {
        let lerp =
            |t: f64, a: Point, b: Point| Point::new(a.r + t * (b.r - a.r), a.z + t * (b.z - a.z));
        match (self.fixed[k].is_free(), self.fixed[q].is_free()) {
            (true, true) => (p, qp),
            (true, false) => {
                let t = self.cuts[k][dk as usize].map_or(1.0, |c| c.theta);
                (p, lerp(t, p, qp))
            }
            (false, true) => {
                let t = self.cuts[q][dq as usize].map_or(1.0, |c| c.theta);
                (lerp(t, qp, p), qp)
            }
            (false, false) => (p, qp),
        }
    }
}

fn link_len(m: &Mesh, a: usize, b: usize) -> f64 {
    let (p, q) = (m.point(a), m.point(b));
    (q.r - p.r).hypot(q.z - p.z)
}

fn shift(p: Point, dr: f64, dz: f64) -> Point {
    Point::new((p.r + dr).max(0.0), p.z + dz)
}

fn weighted(a: f64, wa: f64, b: f64, wb: f64) -> f64 {
    let w = wa + wb;
    if w > 0.0 {
        (a * wa + b * wb) / w
    } else {
        0.5 * (a + b)
    }
}

/// Harmonic mean of the permittivity along the segment a → b, with at most one interface
/// located by root finding on the signed distance of the dielectric that holds one end.
fn series_eps(model: &Model, a: Point, b: Point) -> f64 {
    let da = model.dielectric_at(a);
    let db = model.dielectric_at(b);
    let ea = da.map_or(1.0, |k| model.dielectrics[k].eps_r);
    let eb = db.map_or(1.0, |k| model.dielectrics[k].eps_r);
    if da == db {
        return ea;
    }
    let len = (b.r - a.r).hypot(b.z - a.z);
    if len == 0.0 {
        return ea;
    }
    // Fraction of the segment in a's material.
    let t = if let Some(k) = da {
        let s = &model.dielectrics[k].shape;
        // a is inside dielectric k: search from b (outside k) towards a.
        1.0 - crossing(|x| s.sdf(x), b, a, 1e-12 * (1.0 + len))
    } else if let Some(k) = db {
        let s = &model.dielectrics[k].shape;
        crossing(|x| s.sdf(x), a, b, 1e-12 * (1.0 + len))
    } else {
        0.5
    };
    let t = t.clamp(0.0, 1.0);
    1.0 / (t / ea + (1.0 - t) / eb)
}

/// The sampled point deepest inside a shape and its depth (about half the local thickness),
/// on a grid over the bounding box at a quarter of `cell`, at most 256 samples a side. When
/// no sample falls inside, the box centre and the sample spacing.
fn deepest_point(shape: &Shape, cell: f64) -> (Point, f64) {
    let b = shape.bbox();
    let (w, h) = (b.r_max - b.r_min, b.z_max - b.z_min);
    let step = (0.25 * cell).max(w / 256.0).max(h / 256.0);
    let (nr, nz) = ((w / step).ceil() as usize, (h / step).ceil() as usize);
    let mut best = (
        Point::new(0.5 * (b.r_min + b.r_max), 0.5 * (b.z_min + b.z_max)),
        0.0,
    );
    for j in 0..=nz.min(256) {
        for i in 0..=nr.min(256) {
            let p = Point::new(b.r_min + i as f64 * step, b.z_min + j as f64 * step);
            let depth = -shape.sdf(p);
            if depth > best.1 {
                best = (p, depth);
            }
        }
    }
    if best.1 > 0.0 { best } else { (best.0, step) }
}

fn thickness_hint(shape: &Shape) -> f64 {
    let b = shape.bbox();
    (b.r_max - b.r_min).min(b.z_max - b.z_min)
}

/// Range of node indices whose coordinate lies within [lo, hi] (widened by one node).
fn index_range(axis: &Axis, lo: f64, hi: f64) -> (usize, usize) {
    let n = axis.len();
    let i0 = axis.x.partition_point(|&x| x < lo).saturating_sub(1);
    let i1 = axis.x.partition_point(|&x| x <= hi).min(n - 1);
    (i0.min(n - 1), i1)
}

/// Target spacing at `x`: `frac × cell` inside a feature's extent, growing geometrically away
/// from it, never above `max_cell`.
fn spacing_at(x: f64, feats: &[Band], cell: f64, max_cell: f64, growth: f64) -> f64 {
    let mut h = max_cell;
    let mut finest = max_cell;
    for &(lo, hi, frac) in feats {
        let d = if x < lo {
            lo - x
        } else if x > hi {
            x - hi
        } else {
            0.0
        };
        let hf = (frac * cell).min(max_cell);
        finest = finest.min(hf);
        h = h.min(hf + (growth - 1.0) * d);
    }
    h.max(finest)
}

/// Node positions on [a, b]: every fixed point is a node; between fixed points the nodes
/// equidistribute the target spacing.
fn grade_axis(
    a: f64,
    b: f64,
    feats: &[Band],
    fixed: &[f64],
    cell: f64,
    max_cell: f64,
    growth: f64,
) -> Axis {
    let mut pts: Vec<f64> = fixed
        .iter()
        .cloned()
        .filter(|x| x.is_finite() && *x >= a && *x <= b)
        .collect();
    pts.push(a);
    pts.push(b);
    pts.sort_by(f64::total_cmp);
    // Merge fixed points closer than a fifth of the local spacing; the ends always stay.
    let mut merged: Vec<f64> = Vec::with_capacity(pts.len());
    for x in pts {
        if let Some(&last) = merged.last() {
            let h = spacing_at(x, feats, cell, max_cell, growth);
            if x - last < 0.2 * h {
                if x == b {
                    merged.pop();
                    merged.push(b);
                }
                continue;
            }
        }
        merged.push(x);
    }
    let mut xs = vec![merged[0]];
    for w in merged.windows(2) {
        let (x0, x1) = (w[0], w[1]);
        // Integral of 1/h over [x0, x1] by the midpoint rule on a fine sub-grid.
        let finest = feats.iter().map(|f| f.2).fold(1.0f64, f64::min) * cell;
        let samples = (((x1 - x0) / (0.1 * finest)).ceil() as usize).clamp(8, 400_000);
        let dx = (x1 - x0) / samples as f64;
        let mut cum = Vec::with_capacity(samples + 1);
        cum.push(0.0);
        let mut s = 0.0;
        for k in 0..samples {
            let xm = x0 + (k as f64 + 0.5) * dx;
            s += dx / spacing_at(xm, feats, cell, max_cell, growth);
            cum.push(s);
        }
        let n = (s.round() as usize).max(1);
        // Positions where the cumulative count reaches each whole fraction.
        let mut seg = 1usize;
        for m in 1..n {
            let target = s * m as f64 / n as f64;
            while seg < samples && cum[seg] < target {
                seg += 1;
            }
            let c0 = cum[seg - 1];
            let c1 = cum[seg];
            let f = if c1 > c0 {
                (target - c0) / (c1 - c0)
            } else {
                0.0
            };
            xs.push(x0 + (seg as f64 - 1.0 + f) * dx);
        }
        xs.push(x1);
    }
    Axis::new(xs)
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
