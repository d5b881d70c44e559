//! The validated problem definition: everything in SI units, names resolved, generators expanded.
//!
//! Input: produced by `design::validate` from a parsed design file (or built directly by tests).
//! Output: consumed by `grading` (electrode potentials), `mesh` (geometry), `solve`, `field` and
//! the criteria. Nothing here knows about TOML or about the grid.

use crate::geometry::{BBox, Point, Shape};
use serde::Serialize;

/// How a conductor's potential is set, before the grading network resolves it to volts.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum PotentialSpec {
    /// Earthed: 0 V.
    Ground,
    /// A fraction of the terminal voltage (1.0 for the terminal itself).
    Terminal { fraction: f64 },
    /// A fixed potential in volts.
    Absolute { volts: f64 },
    /// Node `node` of the grading network of column `column` (0 = the column's `from` end).
    Grading { column: usize, node: usize },
    /// The loaded mean voltage of multiplier stage node `stage`.
    Stage { stage: usize },
}

/// Where a primitive came from, for the expanded-model listing and for error messages.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Origin {
    /// Written directly in the design file (`[[conductor]]`, `[[dielectric]]`, ...), with the
    /// 1-based line of its table header when known.
    Direct { line: Option<usize> },
    /// Made by a `[[column]]` generator.
    Column {
        column: usize,
        electrode: usize,
        line: Option<usize>,
    },
    /// Made by the test harness or a library caller.
    Program,
}

/// A conductor: a surface held at a potential.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Conductor {
    pub name: String,
    pub shape: Shape,
    pub potential: PotentialSpec,
    pub origin: Origin,
}

/// A region of piecewise-constant permittivity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Dielectric {
    pub name: String,
    pub shape: Shape,
    pub eps_r: f64,
    /// Material name from the built-in table, when one was used.
    pub material: Option<String>,
    /// Where the permittivity value comes from.
    pub source: String,
    pub origin: Origin,
}

/// A region held at vacuum (the beam-tube bore); eps_r = 1 and vacuum criteria apply.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VacuumRegion {
    pub name: String,
    pub shape: Shape,
    pub origin: Origin,
}

/// The grounded vessel.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "shape", rename_all = "snake_case")]
pub enum Tank {
    /// Closed cylinder r <= inner_radius, 0 <= z <= length.
    Cylinder { inner_radius: f64, length: f64 },
    /// Sphere of radius inner_radius centred on the axis at z = inner_radius.
    Sphere { inner_radius: f64 },
}

/// What holds at the flat ends (z = 0, z = length) of a cylindrical tank, and at its wall.
/// Design files always give grounded walls; `Symmetry` (zero normal field) is for analytic
/// checks such as an infinitely long coaxial line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Wall {
    Grounded,
    Symmetry,
}

impl Tank {
    /// The (r, z) box that the grid covers.
    pub fn bbox(&self) -> BBox {
        match *self {
            Tank::Cylinder {
                inner_radius,
                length,
            } => BBox {
                r_min: 0.0,
                r_max: inner_radius,
                z_min: 0.0,
                z_max: length,
            },
            Tank::Sphere { inner_radius } => BBox {
                r_min: 0.0,
                r_max: inner_radius,
                z_min: 0.0,
                z_max: 2.0 * inner_radius,
            },
        }
    }

    /// Signed distance to the tank wall, negative *inside the gas space*.
    pub fn sdf_inside(&self, p: Point) -> f64 {
        match *self {
            Tank::Cylinder {
                inner_radius,
                length,
            } => {
                let d = [p.r - inner_radius, -p.z, p.z - length];
                d.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
            }
            Tank::Sphere { inner_radius } => p.r.hypot(p.z - inner_radius) - inner_radius,
        }
    }

    /// Volume of the vessel, m³.
    pub fn volume(&self) -> f64 {
        match *self {
            Tank::Cylinder {
                inner_radius,
                length,
            } => std::f64::consts::PI * inner_radius * inner_radius * length,
            Tank::Sphere { inner_radius } => {
                4.0 / 3.0 * std::f64::consts::PI * inner_radius.powi(3)
            }
        }
    }
}

/// The insulating gas that fills the tank outside vacuum regions and dielectrics.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Gas {
    /// "air", "N2", "CO2", "SF6", or a mixture label such as "SF6:0.5,N2:0.5".
    pub species: String,
    /// Mole fractions by component, summing to 1.
    pub components: Vec<(String, f64)>,
    /// Absolute pressure, Pa.
    pub pressure_pa: f64,
    /// Temperature, K.
    pub temperature_k: f64,
}

impl Gas {
    /// Number density, m⁻³: n = p/(Z·k·T), with the real-gas compressibility Z where it
    /// differs from 1 by more than 1 % ([`crate::thermo::applied_compressibility`]), the
    /// ideal gas otherwise.
    pub fn number_density(&self) -> f64 {
        const BOLTZMANN: f64 = 1.380_649e-23; // J/K, CODATA 2018 exact
        self.pressure_pa / (self.compressibility() * BOLTZMANN * self.temperature_k)
    }

    /// The compressibility factor applied to this gas (1 for the ideal gas).
    pub fn compressibility(&self) -> f64 {
        crate::thermo::applied_compressibility(
            &self.components_or_species(),
            self.pressure_pa,
            self.temperature_k,
        )
    }

    /// The mole fractions, or the species alone when no table was given.
    pub fn components_or_species(&self) -> Vec<(String, f64)> {
        if self.components.is_empty() {
            vec![(self.species.clone(), 1.0)]
        } else {
            self.components.clone()
        }
    }
}

/// Parameters of the `[[column]]` grading electrodes that later stages need.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Column {
    pub name: String,
    /// Conductor index at the `from` end (None = the tank, i.e. ground).
    pub from: Option<usize>,
    /// Conductor index at the `to` end.
    pub to: Option<usize>,
    /// Conductor indices of the generated electrodes, in order from `from` to `to`.
    pub electrodes: Vec<usize>,
    /// Grading resistor per gap, Ohm, when given.
    pub resistor_ohm: Option<f64>,
    /// Resistor tolerance as a fraction (0.01 for 1 %).
    pub tolerance: Option<f64>,
    /// Parallel strings.
    pub strings: usize,
    /// Voltage rating of one resistor, V, when given.
    pub resistor_rating_v: Option<f64>,
    /// Dissipation rating of one resistor, W, when given.
    pub resistor_power_w: Option<f64>,
    /// Short-pulse (impulse) voltage rating of one resistor, V, when given: the spark
    /// transient is checked against it (against the DC rating when it is not given).
    pub resistor_impulse_v: Option<f64>,
    /// Protective spark gaps, when given.
    pub protective_gap: Option<ProtectiveSpec>,
    /// Insulator leakage across each gap.
    pub leakage: LeakageSpec,
    /// Current drawn from each electrode to ground (beam loss, corona), A; one per electrode,
    /// positive when it flows from the electrode to ground.
    pub node_current_a: Vec<f64>,
}

/// Protective spark gaps of a column: one across every `span` consecutive gaps.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ProtectiveSpec {
    /// Nominal firing voltage, V.
    pub firing_v: f64,
    /// Half-width of the firing band, fraction of the firing voltage.
    pub band: f64,
    /// Gaps bridged by each protective gap (1 = one across every gap).
    pub span: usize,
    /// Voltage a fired gap falls to before its arc goes out, V, when given (below the firing
    /// voltage); the repetitive-firing figures take 0 V and say so otherwise.
    pub arc_floor_v: Option<f64>,
}

/// How the insulator leakage in parallel with each gap is set.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LeakageSpec {
    /// Bulk leakage through the insulators that span each gap, from their materials' volume
    /// resistivity (the built-in table's values are common practice).
    FromMaterials,
    /// No leakage.
    None,
    /// This resistance across every gap, Ohm.
    PerGap(f64),
}

/// The `[multiplier]` table, SI units.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Multiplier {
    /// "half-wave" or "symmetric".
    pub topology: String,
    pub stages: usize,
    pub stage_capacitance_f: f64,
    pub drive_frequency_hz: f64,
    pub drive_peak_v: f64,
    pub load_current_a: f64,
    /// None = "auto" (from the field solution); otherwise farads per node.
    pub stray_capacitance_f: Option<f64>,
}

/// Mesh controls, SI units.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeshSpec {
    /// Target spacing near conductor and dielectric surfaces, m.
    pub cell: f64,
    /// Largest spacing anywhere, m.
    pub max_cell: f64,
    /// Largest ratio between neighbouring spacings (geometric grading).
    pub growth: f64,
    /// Target on the estimated relative error of every peak that enters a margin row.
    pub accuracy: f64,
    /// Cells per radius of curvature on the curved parts of every conductor (the spacing
    /// there is the smaller of this and `cell`, never below `cell / START_DIVISION` before
    /// refinement nor `cell / MAX_LOCAL_DIVISION` after it);
    /// 0 when `cell` was set by hand, which then holds everywhere (the expert override) and
    /// no refinement is made.
    pub cells_per_radius: f64,
    /// Spacing factor of each conductor's neighbourhood (1 unless the accuracy loop refined
    /// it); empty means 1 everywhere.
    pub refine: Vec<f64>,
    /// Spacing factor of each dielectric's neighbourhood (1 unless the accuracy loop refined
    /// it for the tangential field along its surface); empty means 1 everywhere.
    pub refine_dielectric: Vec<f64>,
}

/// Finest local spacing the geometry-derived start and the refinement may ask for, as a
/// division of `cell`: a bound on the nodes a very small radius can demand.
pub const MAX_LOCAL_DIVISION: f64 = 64.0;

/// Finest spacing the geometry-derived start gives a curved part, as a division of `cell`
/// (smaller radii are left to the refinement, which only refines stressed conductors).
pub const START_DIVISION: f64 = 8.0;

/// Default accuracy target: 0.5 % on every peak that enters a margin row.
pub const DEFAULT_ACCURACY: f64 = 0.005;

/// Default resolution of curved surfaces: 12 cells per radius of curvature, so that the
/// coarsest grid of the grid study (twice the spacing) still has six (common practice for
/// second-order schemes on curved boundaries, checked in tests/accuracy.rs).
pub const DEFAULT_CELLS_PER_RADIUS: f64 = 12.0;

impl MeshSpec {
    /// The default spacing for a domain of the given size: 1/400 of its largest dimension,
    /// graded by 1.15 up to 8 cells, with curved surfaces resolved by
    /// `DEFAULT_CELLS_PER_RADIUS` cells per radius.
    pub fn default_for(domain: &BBox) -> Self {
        let size = (domain.r_max - domain.r_min).max(domain.z_max - domain.z_min);
        let cell = size / 400.0;
        Self {
            cells_per_radius: DEFAULT_CELLS_PER_RADIUS,
            ..Self::graded(cell, 8.0 * cell, 1.15)
        }
    }

    /// A fixed spacing `cell` at surfaces graded by `growth` up to `max_cell` (no
    /// geometry-derived spacing, no refinement: the expert override).
    pub fn graded(cell: f64, max_cell: f64, growth: f64) -> Self {
        Self {
            cell,
            max_cell,
            growth,
            accuracy: DEFAULT_ACCURACY,
            cells_per_radius: 0.0,
            refine: Vec::new(),
            refine_dielectric: Vec::new(),
        }
    }

    /// A uniform grid of spacing `cell`.
    pub fn uniform(cell: f64) -> Self {
        Self::graded(cell, cell, 1.0)
    }

    /// The same spacing scaled by `factor` (a coarser grid for the grid study): every
    /// spacing, local ones included, grows by the factor.
    pub fn scaled(&self, factor: f64) -> Self {
        Self {
            cell: self.cell * factor,
            max_cell: self.max_cell * factor,
            cells_per_radius: self.cells_per_radius / factor,
            ..self.clone()
        }
    }

    /// Spacing factor of conductor `index`'s neighbourhood.
    pub fn refinement(&self, index: usize) -> f64 {
        self.refine.get(index).copied().unwrap_or(1.0)
    }

    /// Spacing factor of dielectric `index`'s neighbourhood.
    pub fn dielectric_refinement(&self, index: usize) -> f64 {
        self.refine_dielectric.get(index).copied().unwrap_or(1.0)
    }

    /// Is the spacing derived from the geometry (and refined to the accuracy target)?
    pub fn adaptive(&self) -> bool {
        self.cells_per_radius > 0.0
    }
}

/// A point whose potential and field are reported.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Probe {
    pub name: String,
    pub at: Point,
}

/// Override of a built-in limit from `[checks]`, kept as data so every output can flag it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Checks {
    pub design_factor: f64,
    /// Key/value overrides as given (SI units), flagged "user-set" wherever they are used.
    pub overrides: Vec<(String, f64)>,
}

impl Default for Checks {
    fn default() -> Self {
        Self {
            design_factor: 1.5,
            overrides: Vec::new(),
        }
    }
}

/// The whole validated design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Model {
    pub title: String,
    pub tank: Tank,
    /// Boundary condition on the flat ends of a cylindrical tank.
    pub ends: Wall,
    /// Boundary condition on the cylindrical wall of a cylindrical tank.
    pub side: Wall,
    pub gas: Option<Gas>,
    pub terminal_voltage: f64,
    pub conductors: Vec<Conductor>,
    pub dielectrics: Vec<Dielectric>,
    pub vacuum: Vec<VacuumRegion>,
    pub columns: Vec<Column>,
    pub multiplier: Option<Multiplier>,
    pub checks: Checks,
    pub mesh: MeshSpec,
    pub probes: Vec<Probe>,
}

impl Model {
    /// An empty model in the given tank: grounded walls, no gas, default mesh.
    pub fn new(title: &str, tank: Tank, terminal_voltage: f64) -> Self {
        Self {
            title: title.to_string(),
            tank,
            ends: Wall::Grounded,
            side: Wall::Grounded,
            gas: None,
            terminal_voltage,
            conductors: Vec::new(),
            dielectrics: Vec::new(),
            vacuum: Vec::new(),
            columns: Vec::new(),
            multiplier: None,
            checks: Checks::default(),
            mesh: MeshSpec::default_for(&tank.bbox()),
            probes: Vec::new(),
        }
    }

    /// Relative permittivity at `p`: the last dielectric listed that contains it, else 1
    /// (gas and vacuum are taken as 1; the gas correction of order 1e-3 is below the
    /// numerical error).
    pub fn eps_r_at(&self, p: Point) -> f64 {
        let mut eps = 1.0;
        for d in &self.dielectrics {
            if d.shape.contains(p) {
                eps = d.eps_r;
            }
        }
        eps
    }

    /// Index of the dielectric containing `p`, if any (the last listed wins).
    pub fn dielectric_at(&self, p: Point) -> Option<usize> {
        let mut found = None;
        for (k, d) in self.dielectrics.iter().enumerate() {
            if d.shape.contains(p) {
                found = Some(k);
            }
        }
        found
    }

    /// Is `p` in a vacuum region (and not inside a dielectric)?
    pub fn in_vacuum(&self, p: Point) -> bool {
        self.dielectric_at(p).is_none() && self.vacuum.iter().any(|v| v.shape.contains(p))
    }
}
