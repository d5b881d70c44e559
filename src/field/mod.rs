//! The electric field from a solved potential: on true conductor surfaces, at grid nodes and
//! at probe points.
//!
//! Input: a `mesh::Mesh`, the model (surface normals, permittivities) and a potential per node.
//! Output: surface samples (where every grid link meets a conductor, the normal field from a
//! one-sided quadratic through the surface value and the two nearest nodes along the link),
//! per-conductor peaks with their location, and interpolated potential and field at points.
//!
//! On an equipotential surface the field is normal to the surface, so the derivative along a
//! link, divided by the cosine between the link and the normal, is the whole field. Only links
//! within about 53° of the normal are used, so that the division never amplifies error by more
//! than 1.7.

mod insulator;
mod peak;

pub use insulator::{InsulatorPeak, InsulatorSample, JUNCTION_REACH_CELLS, JunctionSample};

use crate::geometry::Point;
use crate::mesh::{DIRS, Dir, FixedId, Holder, Mesh};
use crate::model::{Model, Tank};
use rayon::prelude::*;
use serde::Serialize;
use std::sync::OnceLock;

/// Vacuum permittivity, F/m (CODATA 2018).
pub const EPSILON_0: f64 = 8.854_187_812_8e-12;

/// Meshes from this many nodes form their node-field table in parallel.
const PARALLEL_NODES: usize = 50_000;

/// Smallest cosine between a link and the surface normal for a sample to be used.
const MIN_COSINE: f64 = 0.6;

/// The medium on the field side of a surface point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Medium {
    Gas,
    Vacuum,
    Dielectric { index: usize },
}

/// One sample of the field on a conductor surface.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct SurfaceSample {
    pub at: Point,
    /// Conductor index, or the tank.
    pub conductor: FixedId,
    /// Magnitude of the field, V/m.
    pub e: f64,
    /// Normal component, V/m: positive when the field points out of the conductor (the
    /// surface is an anode), negative on a cathodic surface.
    pub e_normal: f64,
    /// Outward unit normal of the conductor.
    pub normal: Point,
    pub medium: Medium,
    pub eps_r: f64,
}

/// The peak surface field of one conductor.
#[derive(Debug, Clone, Serialize)]
pub struct ConductorPeak {
    pub index: usize,
    pub name: String,
    pub potential_v: f64,
    pub peak_surface_field_v_per_m: f64,
    pub at: Point,
    pub medium: Medium,
    /// How many surface samples the peak was taken from.
    pub samples: usize,
    /// Scatter of the samples about the smooth profile the peak was read from (RMS
    /// residual), V/m: the part of the numerical error that the sampling adds and that a grid
    /// study of few grids does not see as a trend. 0 when the largest sample was kept.
    pub scatter_v_per_m: f64,
}

/// The surface samples of one mesh and model, placed once ([`FieldMap::surface_plan`]).
#[derive(Debug, Clone)]
pub struct SurfacePlan {
    samples: Vec<PlannedSample>,
}

impl SurfacePlan {
    /// The plan of `mesh` built from `model` (no field is needed to place the samples).
    pub fn of(mesh: &Mesh, model: &Model) -> SurfacePlan {
        FieldMap::new(mesh, model, &[], &[]).surface_plan()
    }
}

/// One surface sample without its field, and how the field follows from the potentials: the
/// derivative along the link Σ w·y over the surface and node values (divided by r at the
/// surface where the fit was made in ln r), divided by the cosine to the normal.
#[derive(Debug, Clone)]
struct PlannedSample {
    sample: SurfaceSample,
    terms: Vec<(Term, f64)>,
    radial_r: Option<f64>,
    cosine: f64,
}

/// A value along a sample's link: a free node's potential or a conductor's.
#[derive(Debug, Clone, Copy)]
enum Term {
    Node(u32),
    Fixed(FixedId),
}

/// The three-point derivative on an uneven stencil: spans `hp` to the value `vp` ahead and
/// `hm` to `vm` behind, `v0` at the node.
#[inline]
fn three_point(hp: f64, hm: f64, vp: f64, v0: f64, vm: f64) -> f64 {
    (vp - v0) * hm / (hp * (hp + hm)) + (v0 - vm) * hp / (hm * (hp + hm))
}

/// The spans on either side of every interior coordinate of an axis, for the node-field
/// table's three-point derivatives.
struct Spans {
    /// `(ahead, behind)` of each coordinate (zero at the ends, which are not used).
    h: Vec<(f64, f64)>,
}

impl Spans {
    fn of(x: &[f64]) -> Spans {
        let n = x.len();
        let h = (0..n)
            .map(|i| {
                if i > 0 && i + 1 < n {
                    (x[i + 1] - x[i], x[i] - x[i - 1])
                } else {
                    (0.0, 0.0)
                }
            })
            .collect();
        Spans { h }
    }

    #[inline]
    fn derivative(&self, i: usize, vp: f64, v0: f64, vm: f64) -> f64 {
        let (hp, hm) = self.h[i];
        three_point(hp, hm, vp, v0, vm)
    }
}

/// Potential and field at a point.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct PointField {
    pub at: Point,
    pub potential_v: f64,
    /// (E_r, E_z), V/m.
    pub field: [f64; 2],
}

/// One grid cell as [`FieldMap::at`] sees it: its extent and its corners' potentials,
/// fields and classes, corners in the order (i, j), (i + 1, j), (i, j + 1), (i + 1, j + 1).
/// A field line takes several steps per cell, so the tracer keeps the last one.
#[derive(Debug, Clone, Copy)]
pub(crate) struct CellField {
    pub i: usize,
    pub j: usize,
    /// Radii of the cell's sides.
    pub r: [f64; 2],
    /// Axial positions of the cell's sides.
    pub z: [f64; 2],
    /// ln(r₁/r₀), or 0 in the cell on the axis.
    r_log: f64,
    phi: [f64; 4],
    field: [[f64; 2]; 4],
    free: [bool; 4],
}

impl CellField {
    /// Whether `p` is in this cell as `Axis::locate` finds it (its lower sides included).
    pub fn holds(&self, p: Point) -> bool {
        self.r[0] <= p.r && p.r < self.r[1] && self.z[0] <= p.z && p.z < self.z[1]
    }

    /// The smaller side of the cell.
    pub fn spacing(&self) -> f64 {
        (self.r[1] - self.r[0]).min(self.z[1] - self.z[0])
    }

    /// Potential and field at `p` by bilinear interpolation over the free corners (see
    /// [`FieldMap::at`]; `p` need not lie in the cell, the weights are clamped to it).
    #[inline(always)]
    pub fn at(&self, p: Point) -> PointField {
        let [r0, r1] = self.r;
        let [z0, z1] = self.z;
        let tr = if r0 > 0.0 {
            ((p.r / r0).ln() / self.r_log).clamp(0.0, 1.0)
        } else {
            ((p.r / r1).powi(2)).clamp(0.0, 1.0)
        };
        let tz = ((p.z - z0) / (z1 - z0)).clamp(0.0, 1.0);
        let w = [
            (1.0 - tr) * (1.0 - tz),
            tr * (1.0 - tz),
            (1.0 - tr) * tz,
            tr * tz,
        ];
        let mut v = 0.0;
        for (w, phi) in w.iter().zip(self.phi) {
            v += w * phi;
        }
        let mut e = [0.0, 0.0];
        let mut wsum = 0.0;
        for ((w, f), free) in w.iter().zip(self.field).zip(self.free) {
            if free {
                e[0] += w * f[0];
                e[1] += w * f[1];
                wsum += w;
            }
        }
        if wsum > 0.0 {
            e[0] /= wsum;
            e[1] /= wsum;
        }
        PointField {
            at: p,
            potential_v: v,
            field: e,
        }
    }
}

/// A solved potential together with the mesh it lives on.
pub struct FieldMap<'a> {
    pub mesh: &'a Mesh,
    pub model: &'a Model,
    pub phi: &'a [f64],
    /// Potential of each conductor, volts.
    pub potentials: &'a [f64],
    /// The field at every node, formed on the first interpolation (field lines and insulator
    /// samples interpolate hundreds of thousands of times per solution).
    node_fields: NodeFields<'a>,
}

/// The node-field table of a field map: its own, or one kept with the solution (an
/// `analysis::Analysis`) so that every map of that solution forms it once.
enum NodeFields<'a> {
    Own(OnceLock<Vec<[f64; 2]>>),
    Shared(&'a OnceLock<Vec<[f64; 2]>>),
}

impl<'a> FieldMap<'a> {
    pub fn new(mesh: &'a Mesh, model: &'a Model, phi: &'a [f64], potentials: &'a [f64]) -> Self {
        Self {
            mesh,
            model,
            phi,
            potentials,
            node_fields: NodeFields::Own(OnceLock::new()),
        }
    }

    /// As [`FieldMap::new`], with the node-field table kept in `node_fields`, which must
    /// belong to this `mesh`, `phi` and `potentials` (it is formed on first use if empty).
    pub fn sharing(
        mesh: &'a Mesh,
        model: &'a Model,
        phi: &'a [f64],
        potentials: &'a [f64],
        node_fields: &'a OnceLock<Vec<[f64; 2]>>,
    ) -> Self {
        Self {
            mesh,
            model,
            phi,
            potentials,
            node_fields: NodeFields::Shared(node_fields),
        }
    }

    /// The field at every node (zero at fixed nodes), as [`FieldMap::node_field`]: formed on
    /// first use and kept (in the shared table when the map was made by
    /// [`FieldMap::sharing`]).
    pub fn node_fields(&self) -> &[[f64; 2]] {
        let cache = match &self.node_fields {
            NodeFields::Own(c) => c,
            NodeFields::Shared(c) => *c,
        };
        cache.get_or_init(|| {
            let m = self.mesh;
            let (nr, n) = (m.nr(), m.nodes());
            let r = Spans::of(&m.r.x);
            let z = Spans::of(&m.z.x);
            let mut out = vec![[0.0f64; 2]; n];
            let row = |(j, out): (usize, &mut [[f64; 2]])| self.node_field_row(j, &r, &z, out);
            if n >= PARALLEL_NODES {
                out.par_chunks_mut(nr).enumerate().for_each(row);
            } else {
                out.chunks_mut(nr).enumerate().for_each(row);
            }
            out
        })
    }

    /// The node fields of grid row `j` into `out`, as [`FieldMap::node_field`] gives them: a
    /// free interior node without cuts takes the three-point derivatives with the spans of
    /// `r` and `z` (the same values, the same operations), every other node the general path.
    fn node_field_row(&self, j: usize, r: &Spans, z: &Spans, out: &mut [[f64; 2]]) {
        let m = self.mesh;
        let nr = m.nr();
        let base = j * nr;
        let interior_z = j > 0 && j + 1 < m.nz();
        for (i, o) in out.iter_mut().enumerate() {
            let k = base + i;
            if !m.fixed[k].is_free() {
                continue;
            }
            if !(interior_z && i > 0 && i + 1 < nr) || m.cuts.has_cuts(k) {
                *o = self.node_field(k);
                continue;
            }
            let v0 = self.phi[k];
            let er = -r.derivative(i, self.phi[k + 1], v0, self.phi[k - 1]);
            let ez = -z.derivative(j, self.phi[k + nr], v0, self.phi[k - nr]);
            *o = [er, ez];
        }
    }

    /// The larger spacing of the grid cell that holds `p`.
    fn spacing_at(&self, p: Point) -> f64 {
        let m = self.mesh;
        let (i, j) = (m.r.locate(p.r), m.z.locate(p.z));
        (m.r.x[i + 1] - m.r.x[i]).max(m.z.x[j + 1] - m.z.x[j])
    }

    fn fixed_potential(&self, id: FixedId) -> f64 {
        id.conductor_index().map_or(0.0, |c| self.potentials[c])
    }

    fn step(&self, k: usize, d: Dir) -> Option<(usize, f64)> {
        let m = self.mesh;
        let nr = m.nr();
        let (i, j) = (k % nr, k / nr);
        match d {
            Dir::E => (i + 1 < nr).then(|| (k + 1, m.r.x[i + 1] - m.r.x[i])),
            Dir::W => (i > 0).then(|| (k - 1, m.r.x[i] - m.r.x[i - 1])),
            Dir::N => (j + 1 < m.nz()).then(|| (k + nr, m.z.x[j + 1] - m.z.x[j])),
            Dir::S => (j > 0).then(|| (k - nr, m.z.x[j] - m.z.x[j - 1])),
        }
    }

    fn opposite(d: Dir) -> Dir {
        match d {
            Dir::E => Dir::W,
            Dir::W => Dir::E,
            Dir::N => Dir::S,
            Dir::S => Dir::N,
        }
    }

    fn medium_at(&self, p: Point) -> (Medium, f64) {
        match self.model.dielectric_at(p) {
            Some(index) => (
                Medium::Dielectric { index },
                self.model.dielectrics[index].eps_r,
            ),
            None if self.model.vacuum.iter().any(|v| v.shape.contains(p)) => (Medium::Vacuum, 1.0),
            None => (Medium::Gas, 1.0),
        }
    }

    fn normal_of(&self, id: FixedId, p: Point) -> Point {
        match id.holder() {
            Holder::Tank => match self.model.tank {
                Tank::Sphere { inner_radius } => {
                    // Outward from the metal, i.e. towards the centre.
                    let dr = -p.r;
                    let dz = inner_radius - p.z;
                    let n = crate::geometry::magnitude(dr, dz).max(f64::MIN_POSITIVE);
                    Point::new(dr / n, dz / n)
                }
                Tank::Cylinder { .. } => Point::new(0.0, 0.0),
            },
            Holder::Conductor(c) => self.model.conductors[c].shape.normal(p),
            Holder::Free => Point::new(0.0, 0.0),
        }
    }

    /// Every usable surface sample on conductors (and on a spherical tank wall).
    pub fn surface_samples(&self) -> Vec<SurfaceSample> {
        self.surface_plan()
            .samples
            .iter()
            .map(|s| self.apply(s))
            .collect()
    }

    /// Every surface sample of this mesh and model, with the weights that give its field from
    /// the potentials: the geometry of [`FieldMap::surface_samples`], formed once for many
    /// fields on one mesh (the scenarios of a fault replay), each then read by
    /// [`FieldMap::surface_samples_planned`] with the same numbers, bit for bit.
    pub fn surface_plan(&self) -> SurfacePlan {
        let m = self.mesh;
        let mut samples = Vec::new();
        for k in 0..m.nodes() {
            if !m.fixed[k].is_free() {
                continue;
            }
            for d in DIRS {
                let Some(cut) = m.cuts[k][d as usize] else {
                    continue;
                };
                if cut.id.is_tank() && matches!(self.model.tank, Tank::Cylinder { .. }) {
                    // Flat tank walls are not checked here.
                    continue;
                }
                if let Some(s) = self.plan_sample(k, d, cut.theta, cut.id) {
                    samples.push(s);
                }
            }
        }
        SurfacePlan { samples }
    }

    /// The surface samples of this field from a plan made on the same mesh and model.
    pub fn surface_samples_planned(&self, plan: &SurfacePlan) -> Vec<SurfaceSample> {
        plan.samples.iter().map(|s| self.apply(s)).collect()
    }

    /// One planned sample with this field's potentials.
    fn apply(&self, s: &PlannedSample) -> SurfaceSample {
        let mut d = 0.0;
        for &(term, w) in &s.terms {
            let y = match term {
                Term::Node(q) => self.phi[q as usize],
                Term::Fixed(id) => self.fixed_potential(id),
            };
            d += w * y;
        }
        let dphi_ds = match s.radial_r {
            Some(r) => d / r,
            None => d,
        };
        let e_normal = -(dphi_ds / s.cosine);
        SurfaceSample {
            e: e_normal.abs(),
            e_normal,
            ..s.sample
        }
    }

    /// The surface sample where the link from free node `k` in direction `d` meets conductor
    /// `id` at fraction `theta`, as its place and the weights of its normal derivative.
    fn plan_sample(&self, k: usize, d: Dir, theta: f64, id: FixedId) -> Option<PlannedSample> {
        let m = self.mesh;
        let (_, h) = self.step(k, d)?;
        let p = m.point(k);
        let unit = match d {
            Dir::E => Point::new(1.0, 0.0),
            Dir::W => Point::new(-1.0, 0.0),
            Dir::N => Point::new(0.0, 1.0),
            Dir::S => Point::new(0.0, -1.0),
        };
        let s1 = theta * h;
        let b = Point::new(p.r + unit.r * s1, p.z + unit.z * s1);
        let n = self.normal_of(id, b);
        // ŝ points from the surface towards the free node: −unit.
        let cosine = -(n.r * unit.r + n.z * unit.z);
        if cosine < MIN_COSINE {
            return None;
        }
        let (medium, eps_r) = self.medium_at(Point::new(0.5 * (b.r + p.r), 0.5 * (b.z + p.z)));
        // Points along the link away from the surface: the free node, then up to two more
        // free nodes of the same medium, or the next surface met on the way.
        let back = Self::opposite(d);
        let mut xs: Vec<(f64, Term)> = vec![(0.0, Term::Fixed(id))];
        if theta >= 0.1 {
            xs.push((s1, Term::Node(k as u32)));
        }
        let mut node = k;
        let mut dist = s1;
        // The node table is single precision: equal within its rounding.
        let same = |q: usize| (f64::from(m.eps_node[q]) - eps_r).abs() <= 1e-6 * eps_r;
        if same(k) {
            while xs.len() < 4 {
                let Some((q, h2)) = self.step(node, back) else {
                    break;
                };
                if let Some(c2) = m.cuts[node][back as usize] {
                    xs.push((dist + c2.theta * h2, Term::Fixed(c2.id)));
                    break;
                }
                if !m.fixed[q].is_free() || !same(q) {
                    break;
                }
                dist += h2;
                xs.push((dist, Term::Node(q as u32)));
                node = q;
            }
        }
        if xs.len() < 2 {
            xs.push((s1, Term::Node(k as u32)));
        }
        // Along r the fit is made in ln r, in which the field of any surface coaxial with the
        // axis is linear; the derivative is taken back to r at the surface.
        let radial = matches!(d, Dir::E | Dir::W);
        let (at, radial_r) =
            if radial && b.r > 0.0 && xs.iter().all(|&(x, _)| b.r - unit.r * x > 0.0) {
                let us: Vec<f64> = xs
                    .iter()
                    .map(|&(x, _)| ((b.r - unit.r * x) / b.r).ln() * -unit.r)
                    .collect();
                (us, Some(b.r))
            } else {
                (xs.iter().map(|&(x, _)| x).collect(), None)
            };
        let terms = lagrange_weights_at_zero(&at)
            .into_iter()
            .zip(&xs)
            .map(|(w, &(_, t))| (t, w))
            .collect();
        Some(PlannedSample {
            sample: SurfaceSample {
                at: b,
                conductor: id,
                e: 0.0,
                e_normal: 0.0,
                normal: n,
                medium,
                eps_r,
            },
            terms,
            radial_r,
            cosine,
        })
    }

    /// Field (E_r, E_z) at a free node, from quadratic differences that use the true distance
    /// to any neighbouring surface; zero inside conductors.
    pub fn node_field(&self, k: usize) -> [f64; 2] {
        let m = self.mesh;
        if !m.fixed[k].is_free() {
            return [0.0, 0.0];
        }
        let side = |d: Dir| -> Option<(f64, f64)> {
            let (q, h) = self.step(k, d)?;
            if let Some(c) = m.cuts[k][d as usize] {
                Some((c.theta * h, self.fixed_potential(c.id)))
            } else {
                Some((h, self.phi[q]))
            }
        };
        let v0 = self.phi[k];
        let deriv = |plus: Option<(f64, f64)>, minus: Option<(f64, f64)>| -> f64 {
            match (plus, minus) {
                (Some((hp, vp)), Some((hm, vm))) => three_point(hp, hm, vp, v0, vm),
                (Some((hp, vp)), None) => (vp - v0) / hp,
                (None, Some((hm, vm))) => (v0 - vm) / hm,
                (None, None) => 0.0,
            }
        };
        let i = k % m.nr();
        let er = if i == 0 {
            0.0
        } else {
            -deriv(side(Dir::E), side(Dir::W))
        };
        let ez = -deriv(side(Dir::N), side(Dir::S));
        [er, ez]
    }

    /// Potential and field at a point, by bilinear interpolation over the free corners of
    /// the cell that holds it. Along r the weight follows the discretisation: the radial links
    /// carry the shell conductance Δz/ln(r₂/r₁), i.e. a potential linear in ln r between two
    /// nodes, so the weight is linear in ln r (in r² in the cell on the axis, where the
    /// potential is even in r).
    pub fn at(&self, p: Point) -> PointField {
        let m = self.mesh;
        self.cell(m.r.locate(p.r), m.z.locate(p.z)).at(p)
    }

    /// What [`FieldMap::at`] interpolates from in the cell whose lower corner is node (i, j).
    pub(crate) fn cell(&self, i: usize, j: usize) -> CellField {
        let m = self.mesh;
        let corners = [
            m.idx(i, j),
            m.idx(i + 1, j),
            m.idx(i, j + 1),
            m.idx(i + 1, j + 1),
        ];
        let fields = self.node_fields();
        let r = [m.r.x[i], m.r.x[i + 1]];
        CellField {
            i,
            j,
            r,
            z: [m.z.x[j], m.z.x[j + 1]],
            // ln(r₁/r₀), formed once per mesh (0 for the cell on the axis, not used there).
            r_log: if r[0] > 0.0 { m.r_log[i] } else { 0.0 },
            phi: corners.map(|k| self.phi[k]),
            free: corners.map(|k| m.fixed[k].is_free()),
            field: corners.map(|k| {
                if m.fixed[k].is_free() {
                    fields[k]
                } else {
                    [0.0; 2]
                }
            }),
        }
    }

    /// Electrostatic energy of the solved field, J: ½ Σ over links of ε₀ ε_r × (flux
    /// coefficient) × (potential difference)², times 2π for the revolution.
    pub fn energy(&self, op: &crate::solve::operator::Operator) -> f64 {
        // ½ xᵀ A x over the free block plus the boundary couplings equals ½ Σ c (Δφ)² for a
        // symmetric assembly; the link form below holds for both schemes.
        let m = self.mesh;
        let mut w = 0.0;
        for k in 0..m.nodes() {
            if !m.fixed[k].is_free() {
                continue;
            }
            let nc = crate::solve::operator::node_coeffs(m, k, op.scheme);
            for d in DIRS {
                let c = nc.c[d as usize];
                if c == 0.0 {
                    continue;
                }
                let Some((q, _)) = self.step(k, d) else {
                    continue;
                };
                let vq = match m.cuts[k][d as usize] {
                    Some(cut) => self.fixed_potential(cut.id),
                    None => self.phi[q],
                };
                let dv = vq - self.phi[k];
                // Links between two free nodes are visited from both ends.
                let share = if m.cuts[k][d as usize].is_some() {
                    1.0
                } else {
                    0.5
                };
                w += share * c * dv * dv;
            }
        }
        0.5 * w * EPSILON_0 * std::f64::consts::TAU
    }
}

/// Derivative at x = 0 of the polynomial through the points `(x, y)` (the first at x = 0).
#[cfg(test)]
fn lagrange_derivative_at_zero(pts: &[(f64, f64)]) -> f64 {
    let xs: Vec<f64> = pts.iter().map(|&(x, _)| x).collect();
    let mut d = 0.0;
    for (w, &(_, y)) in lagrange_weights_at_zero(&xs).iter().zip(pts) {
        d += w * y;
    }
    d
}

/// The weights of the one-sided derivative along a link: the derivative at x = 0 of the polynomial
/// through values at `xs` (xs[0] = 0) is Σ_j w_j y_j.
fn lagrange_weights_at_zero(xs: &[f64]) -> Vec<f64> {
    xs.iter()
        .enumerate()
        .map(|(j, &xj)| {
            if j == 0 {
                -xs[1..].iter().map(|&x| 1.0 / x).sum::<f64>()
            } else {
                let mut num = 1.0;
                let mut den = 1.0;
                for (k, &xk) in xs.iter().enumerate() {
                    if k == j {
                        continue;
                    }
                    den *= xj - xk;
                    if k != 0 {
                        num *= -xk;
                    }
                }
                num / den
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lagrange_derivative_is_exact_for_cubics() {
        let f = |x: f64| 2.0 - 3.0 * x + 0.5 * x * x + 0.25 * x * x * x;
        let xs = [0.0, 0.3, 1.1, 2.0];
        let pts: Vec<(f64, f64)> = xs.iter().map(|&x| (x, f(x))).collect();
        assert!((lagrange_derivative_at_zero(&pts) + 3.0).abs() < 1e-12);
    }
}
