//! Memory budget of a mesh: the machine's available memory, the bytes a mesh, its solve and
//! the grid study hold per node, and the estimate checked before a mesh is built.

use super::*;

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

pub(super) const GIB: f64 = (1u64 << 30) as f64;

/// Bytes per fine-mesh node of a whole run: the mesh, its solve, and the grid study.
pub(super) fn run_bytes_per_node() -> f64 {
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
    pub(super) fn of(nr: usize, nz: usize, exact: bool) -> MeshEstimate {
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
pub(super) fn check_budget(
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

pub(super) fn check_controls(spec: &crate::model::MeshSpec) -> Result<(), MeshError> {
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
