//! Field lines from a surface hotspot through the medium to the opposite surface.
//!
//! Input: a solved [`FieldMap`] and a [`SurfaceSample`] (the hotspot). Output: a [`FieldLine`]
//! with the path samples (arc length s, |E|, point, potential), the gap length, what the line
//! ends on and the voltage across it, for the gap-voltage and streamer criteria.
//!
//! The line obeys dx/ds = σ·E/|E| with σ = +1 from an anodic surface (the field points out of
//! it) and σ = −1 from a cathodic one, so that it always leaves the surface it starts on. It is
//! integrated by the Dormand–Prince 5(4) embedded Runge–Kutta pair with step-size control
//! (Dormand & Prince, J. Comput. Appl. Math. 6, 19 (1980); Hairer, Nørsett & Wanner, *Solving
//! Ordinary Differential Equations I*, 2nd ed. (1993), §II.4–5) on the bilinearly interpolated
//! field of [`FieldMap::at`]. The line stops where it enters a conductor (found from the node
//! classes and surface cuts of the cell it is in, then the conductor's signed distance), leaves
//! the tank, or crosses into another medium (an insulator, or the edge of a vacuum region); the
//! stopping point is refined by bisection on the last step.

use crate::field::{CellField, FieldMap, Medium, PointField, SurfaceSample};
use crate::geometry::{Point, magnitude};
use crate::mesh::FixedId;
use serde::Serialize;

/// What a field line ends on.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum LineEnd {
    /// Another conductor (or the start conductor again), by index.
    Conductor { index: usize },
    /// The grounded tank wall.
    Tank,
    /// The surface of an insulator (dielectric index): the gap ends on the insulator.
    Dielectric { index: usize },
    /// The boundary of the medium the line started in (a vacuum region meets gas).
    MediumBoundary,
    /// The field vanished or the line grew longer than the domain allows: no opposite surface.
    Stalled,
}

/// One point of a field line.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct LineSample {
    /// Arc length from the start surface, m.
    pub s_m: f64,
    /// Field magnitude, V/m.
    pub e_v_per_m: f64,
    pub at: Point,
    pub potential_v: f64,
}

/// A traced field line.
#[derive(Debug, Clone, Serialize)]
pub struct FieldLine {
    /// Conductor the line starts on (index, or the tank).
    pub start_conductor: FixedId,
    pub medium: Medium,
    /// +1 when the line follows E (anodic start), −1 when it runs against E (cathodic start).
    pub sense: f64,
    pub samples: Vec<LineSample>,
    pub end: LineEnd,
    /// Arc length of the whole line, m: the gap length along the field line.
    pub length_m: f64,
    /// |potential at the start − potential at the end|, V.
    pub voltage_v: f64,
    /// Distance from the surface within which the interpolated field is not used for the
    /// profile (the first grid cell, where the surface value is better), m.
    pub near_surface_m: f64,
    /// Accepted and rejected integration steps.
    pub steps: usize,
    pub rejected_steps: usize,
}

impl FieldLine {
    /// The profile `(s, |E|)` for the streamer integral: the true surface value at s = 0, then
    /// the interpolated field from one grid cell out (linear in between), to the end.
    pub fn profile(&self) -> Vec<(f64, f64)> {
        let mut out = Vec::with_capacity(self.samples.len());
        if let Some(first) = self.samples.first() {
            out.push((first.s_m, first.e_v_per_m));
        }
        let last = self.samples.len().saturating_sub(1);
        for (k, smp) in self.samples.iter().enumerate().skip(1) {
            let keep = smp.s_m >= self.near_surface_m || k == last;
            let increasing = out.last().is_none_or(|&(s, _)| smp.s_m > s);
            if keep && increasing {
                out.push((smp.s_m, smp.e_v_per_m));
            }
        }
        out
    }
}

/// Controls of the tracer, as fractions of the local grid spacing.
#[derive(Debug, Clone, Copy)]
pub struct TraceParams {
    /// Largest step, × local spacing.
    pub max_step: f64,
    /// First step, × local spacing.
    pub first_step: f64,
    /// Position error allowed per step, × local spacing.
    pub tolerance: f64,
    /// Accepted steps before the line counts as stalled.
    pub max_steps: usize,
}

impl Default for TraceParams {
    fn default() -> Self {
        TraceParams {
            max_step: 0.5,
            first_step: 0.05,
            tolerance: 1e-4,
            max_steps: 20_000,
        }
    }
}

// Dormand–Prince 5(4) coefficients (Hairer, Nørsett & Wanner 1993, Table 5.2).
const A21: f64 = 1.0 / 5.0;
const A31: f64 = 3.0 / 40.0;
const A32: f64 = 9.0 / 40.0;
const A41: f64 = 44.0 / 45.0;
const A42: f64 = -56.0 / 15.0;
const A43: f64 = 32.0 / 9.0;
const A51: f64 = 19372.0 / 6561.0;
const A52: f64 = -25360.0 / 2187.0;
const A53: f64 = 64448.0 / 6561.0;
const A54: f64 = -212.0 / 729.0;
const A61: f64 = 9017.0 / 3168.0;
const A62: f64 = -355.0 / 33.0;
const A63: f64 = 46732.0 / 5247.0;
const A64: f64 = 49.0 / 176.0;
const A65: f64 = -5103.0 / 18656.0;
const B1: f64 = 35.0 / 384.0;
const B3: f64 = 500.0 / 1113.0;
const B4: f64 = 125.0 / 192.0;
const B5: f64 = -2187.0 / 6784.0;
const B6: f64 = 11.0 / 84.0;
// Fifth-order minus embedded fourth-order weights (error estimate).
const E1: f64 = 71.0 / 57600.0;
const E3: f64 = -71.0 / 16695.0;
const E4: f64 = 71.0 / 1920.0;
const E5: f64 = -17253.0 / 339200.0;
const E6: f64 = 22.0 / 525.0;
const E7: f64 = -1.0 / 40.0;

struct Tracer<'m, 'a> {
    fm: &'m FieldMap<'a>,
    sense: f64,
    medium: Medium,
    /// The cell of the last field evaluation (the next one is nearly always in it).
    cell: CellField,
    /// What the end test looks at in the cell of its last point.
    near: NearCell,
}

/// The shapes an end test in one grid cell looks at: the conductors named by its corners'
/// classes and cuts, and the dielectrics and vacuum regions whose bounding boxes, widened
/// by a margin far above round-off, reach the cell (a point outside a shape's box is never
/// inside the shape). Kept for the last cell asked about.
struct NearCell {
    cell: (usize, usize),
    /// The cell's extent, sides included.
    r: [f64; 2],
    z: [f64; 2],
    conductors: [FixedId; MAX_CANDIDATES],
    n_conductors: usize,
    dielectrics: Vec<usize>,
    vacuum: Vec<usize>,
    /// The widened boxes of the model's dielectrics and of its vacuum regions.
    dielectric_boxes: Vec<[f64; 4]>,
    vacuum_boxes: Vec<[f64; 4]>,
}

impl NearCell {
    fn holds(&self, p: Point) -> bool {
        self.r[0] <= p.r && p.r <= self.r[1] && self.z[0] <= p.z && p.z <= self.z[1]
    }
}

/// The bounding box of `shape` widened by 1e-9 of its size and place, as
/// (r_min, r_max, z_min, z_max).
fn widened_box(shape: &crate::geometry::Shape) -> [f64; 4] {
    let b = shape.bbox();
    let w = 1e-9 * (b.r_max.abs() + b.r_min.abs() + b.z_max.abs() + b.z_min.abs());
    [b.r_min - w, b.r_max + w, b.z_min - w, b.z_max + w]
}

/// Whether the box `b` of [`widened_box`] meets [r0, r1] × [z0, z1].
fn reaches(b: &[f64; 4], r: [f64; 2], z: [f64; 2]) -> bool {
    !(b[0] > r[1] || b[1] < r[0] || b[2] > z[1] || b[3] < z[0])
}

/// Conductors an end test looks at, at most (four corners, each with its class and cuts).
const MAX_CANDIDATES: usize = 20;

impl<'m, 'a> Tracer<'m, 'a> {
    fn new(fm: &'m FieldMap<'a>, sense: f64, medium: Medium, at: Point) -> Self {
        let m = fm.mesh;
        Tracer {
            fm,
            sense,
            medium,
            cell: fm.cell(m.r.locate(at.r.abs()), m.z.locate(at.z)),
            near: NearCell {
                cell: (usize::MAX, usize::MAX),
                r: [f64::NAN; 2],
                z: [f64::NAN; 2],
                conductors: [FixedId::FREE; MAX_CANDIDATES],
                n_conductors: 0,
                dielectrics: Vec::new(),
                vacuum: Vec::new(),
                dielectric_boxes: (fm.model.dielectrics.iter())
                    .map(|d| widened_box(&d.shape))
                    .collect(),
                vacuum_boxes: (fm.model.vacuum.iter())
                    .map(|v| widened_box(&v.shape))
                    .collect(),
            },
        }
    }

    /// The grid cell (i, j) that holds `q` (with r ≥ 0), as `Axis::locate` finds it,
    /// searched from the last cell.
    fn locate(&self, q: Point) -> (usize, usize) {
        if self.cell.holds(q) {
            return (self.cell.i, self.cell.j);
        }
        let m = self.fm.mesh;
        (
            m.r.locate_near(q.r, self.cell.i),
            m.z.locate_near(q.z, self.cell.j),
        )
    }

    /// The field at `q` (with r ≥ 0), as [`FieldMap::at`] gives it.
    fn field(&mut self, q: Point) -> PointField {
        if !self.cell.holds(q) {
            let (i, j) = self.locate(q);
            self.cell = self.fm.cell(i, j);
        }
        self.cell.at(q)
    }

    /// The unit direction of the line at `p` and the field there, or `None` where the field
    /// vanishes.
    #[inline(always)]
    fn direction(&mut self, p: Point) -> Option<([f64; 2], PointField)> {
        let f = self.field(Point::new(p.r.abs(), p.z));
        let (er, ez) = (f.field[0] * p.r.signum(), f.field[1]);
        let e = magnitude(er, ez);
        if !(e.is_finite() && e > 0.0) {
            return None;
        }
        Some(([self.sense * er / e, self.sense * ez / e], f))
    }

    /// Local grid spacing at `p` (the smaller side of its cell).
    fn spacing(&self, p: Point) -> f64 {
        let q = Point::new(p.r.abs(), p.z);
        if self.cell.holds(q) {
            return self.cell.spacing();
        }
        let m = self.fm.mesh;
        let (i, j) = self.locate(q);
        (m.r.x[i + 1] - m.r.x[i]).min(m.z.x[j + 1] - m.z.x[j])
    }

    /// Makes `near` that of cell (i, j).
    fn near(&mut self, i: usize, j: usize) {
        let near = &mut self.near;
        if near.cell == (i, j) {
            return;
        }
        let m = self.fm.mesh;
        let mut n = 0;
        for k in [
            m.idx(i, j),
            m.idx(i + 1, j),
            m.idx(i, j + 1),
            m.idx(i + 1, j + 1),
        ] {
            let ids = std::iter::once(m.fixed[k]).chain(m.cuts[k].iter().flatten().map(|c| c.id));
            for id in ids {
                if !id.is_free()
                    && !id.is_tank()
                    && !near.conductors[..n].contains(&id)
                    && n < MAX_CANDIDATES
                {
                    near.conductors[n] = id;
                    n += 1;
                }
            }
        }
        near.n_conductors = n;
        near.cell = (i, j);
        near.r = [m.r.x[i], m.r.x[i + 1]];
        near.z = [m.z.x[j], m.z.x[j + 1]];
        let (r, z) = (near.r, near.z);
        let reaching = |boxes: &[[f64; 4]], out: &mut Vec<usize>| {
            out.clear();
            out.extend((0..boxes.len()).filter(|&k| reaches(&boxes[k], r, z)));
        };
        reaching(&near.dielectric_boxes, &mut near.dielectrics);
        reaching(&near.vacuum_boxes, &mut near.vacuum);
    }

    /// Whether `p` lies beyond the end of the line, and on what.
    fn end_at(&mut self, p: Point) -> Option<LineEnd> {
        let model = self.fm.model;
        let p = Point::new(p.r.abs(), p.z);
        if model.tank.sdf_inside(p) >= 0.0 {
            return Some(LineEnd::Tank);
        }
        let (i, j) = self.locate(p);
        self.near(i, j);
        let near = &self.near;
        for &id in &near.conductors[..near.n_conductors] {
            let Some(index) = id.conductor_index() else {
                continue;
            };
            if index < model.conductors.len() && model.conductors[index].shape.sdf(p) <= 0.0 {
                return Some(LineEnd::Conductor { index });
            }
        }
        // Only the shapes that reach the cell (all of them for a point off the grid, which
        // the cell clamps to).
        let in_cell = near.holds(p);
        let dielectric = if in_cell {
            let inside = |&&k: &&usize| model.dielectrics[k].shape.contains(p);
            near.dielectrics.iter().rfind(inside).copied()
        } else {
            model.dielectric_at(p)
        };
        if let Some(index) = dielectric {
            if self.medium != (Medium::Dielectric { index }) {
                return Some(LineEnd::Dielectric { index });
            }
            return None;
        }
        let in_vacuum = if in_cell {
            (near.vacuum.iter()).any(|&k| model.vacuum[k].shape.contains(p))
        } else {
            model.vacuum.iter().any(|v| v.shape.contains(p))
        };
        let crossed = match self.medium {
            Medium::Gas => in_vacuum,
            Medium::Vacuum => !in_vacuum,
            Medium::Dielectric { .. } => false,
        };
        if !crossed {
            return None;
        }
        // A vacuum region that ends on an electrode face (the bore closed by a shield) ends the
        // line on that electrode, even where no grid node near the point is marked as it.
        let tol = 1e-6 * self.spacing(p);
        match (0..model.conductors.len()).find(|&k| model.conductors[k].shape.sdf(p) <= tol) {
            Some(index) => Some(LineEnd::Conductor { index }),
            None => Some(LineEnd::MediumBoundary),
        }
    }

    /// One Dormand–Prince step of length `h` from `p`: the new point, the direction and
    /// field there, and the error estimate.
    fn step(
        &mut self,
        p: Point,
        k1: [f64; 2],
        h: f64,
    ) -> Option<(Point, [f64; 2], PointField, f64)> {
        let at = |c: &[([f64; 2], f64)]| {
            let mut r = p.r;
            let mut z = p.z;
            for (k, a) in c {
                r += h * a * k[0];
                z += h * a * k[1];
            }
            Point::new(r, z)
        };
        let k2 = self.direction(at(&[(k1, A21)]))?.0;
        let k3 = self.direction(at(&[(k1, A31), (k2, A32)]))?.0;
        let k4 = self.direction(at(&[(k1, A41), (k2, A42), (k3, A43)]))?.0;
        let k5 = self
            .direction(at(&[(k1, A51), (k2, A52), (k3, A53), (k4, A54)]))?
            .0;
        let k6 = self
            .direction(at(&[(k1, A61), (k2, A62), (k3, A63), (k4, A64), (k5, A65)]))?
            .0;
        let next = at(&[(k1, B1), (k3, B3), (k4, B4), (k5, B5), (k6, B6)]);
        let (k7, f7) = self.direction(next)?;
        let mut err = [0.0; 2];
        for c in 0..2 {
            err[c] =
                h * (E1 * k1[c] + E3 * k3[c] + E4 * k4[c] + E5 * k5[c] + E6 * k6[c] + E7 * k7[c]);
        }
        Some((next, k7, f7, magnitude(err[0], err[1])))
    }
}

/// The step growth after an accepted step with error ratio `q` = tolerance / error:
/// 0.9 q^(1/5) within [1, 5]. Far from the bounds the bound is taken without the power
/// (0.9 × 6000^(1/5) ≈ 5.12 and 0.9 × 1.69^(1/5) ≈ 0.9996, margins far above its round-off),
/// the same value.
fn growth(q: f64) -> f64 {
    if q >= 6000.0 {
        5.0
    } else if q <= 1.69 {
        1.0
    } else {
        (0.9 * q.powf(0.2)).clamp(1.0, 5.0)
    }
}

/// The potential of a fixed surface.
fn fixed_potential(fm: &FieldMap, id: FixedId) -> f64 {
    id.conductor_index()
        .and_then(|c| fm.potentials.get(c))
        .copied()
        .unwrap_or(0.0)
}

/// Traces the field line that leaves the surface at `from` into its medium.
///
/// Samples on a dielectric side are not traced (their medium is bulk insulation): the line of
/// such a sample ends at once as [`LineEnd::Stalled`] with length zero.
pub fn trace(fm: &FieldMap, from: &SurfaceSample, params: &TraceParams) -> FieldLine {
    let sense = if from.e_normal >= 0.0 { 1.0 } else { -1.0 };
    let v_start = fixed_potential(fm, from.conductor);
    let mut line = FieldLine {
        start_conductor: from.conductor,
        medium: from.medium,
        sense,
        samples: vec![LineSample {
            s_m: 0.0,
            e_v_per_m: from.e,
            at: from.at,
            potential_v: v_start,
        }],
        end: LineEnd::Stalled,
        length_m: 0.0,
        voltage_v: 0.0,
        near_surface_m: 0.0,
        steps: 0,
        rejected_steps: 0,
    };
    if matches!(from.medium, Medium::Dielectric { .. }) || from.e.is_nan() || from.e <= 0.0 {
        return line;
    }
    let mut tracer = Tracer::new(fm, sense, from.medium, from.at);
    let h_surface = tracer.spacing(from.at);
    line.near_surface_m = h_surface;
    let domain = fm.model.tank.bbox();
    let max_length = 4.0 * (domain.r_max - domain.r_min).hypot(domain.z_max - domain.z_min);

    // Start just off the surface along its normal, where the line leaves it.
    let offset = 1e-3 * h_surface;
    let mut p = Point::new(
        from.at.r + offset * from.normal.r,
        from.at.z + offset * from.normal.z,
    );
    let mut s = offset;
    let Some((mut k1, _)) = tracer.direction(p) else {
        return line;
    };
    let mut h = params.first_step * h_surface;
    let mut end_point = p;
    let mut end = LineEnd::Stalled;
    while line.steps < params.max_steps && s < max_length {
        let local = tracer.spacing(p);
        h = h.min(params.max_step * local);
        let tol = params.tolerance * local;
        let stepped = tracer.step(p, k1, h);
        // A step whose stages leave the medium (into a conductor, where the field is zero, or
        // out of the tank) is not accepted; if its Euler predictor has already crossed the end,
        // the end is refined on that straight segment, otherwise the step is halved.
        let predictor = Point::new(p.r + h * k1[0], p.z + h * k1[1]);
        let crossed = match &stepped {
            Some((next, _, _, _)) => tracer.end_at(*next).map(|_| *next),
            None => tracer.end_at(predictor).map(|_| predictor),
        };
        if let Some(target) = crossed
            && (stepped.is_none() || h <= params.max_step * local)
        {
            let (mut lo, mut hi) = (0.0_f64, 1.0_f64);
            for _ in 0..50 {
                let mid = 0.5 * (lo + hi);
                let q = Point::new(p.r + mid * (target.r - p.r), p.z + mid * (target.z - p.z));
                if tracer.end_at(q).is_some() {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            let q = Point::new(p.r + hi * (target.r - p.r), p.z + hi * (target.z - p.z));
            end = tracer.end_at(q).unwrap_or(LineEnd::Stalled);
            end_point = q;
            s += hi * magnitude(target.r - p.r, target.z - p.z);
            break;
        }
        let Some((next, k_next, f, err)) = stepped else {
            // The field vanished inside the step without an end: halve, or give up when tiny.
            h *= 0.5;
            line.rejected_steps += 1;
            if h < 1e-9 * local {
                end_point = p;
                break;
            }
            continue;
        };
        if err > tol && h > 1e-6 * local {
            h *= (0.9 * (tol / err).powf(0.2)).clamp(0.2, 0.9);
            line.rejected_steps += 1;
            continue;
        }
        s += h;
        p = next;
        k1 = k_next;
        line.steps += 1;
        line.samples.push(LineSample {
            s_m: s,
            e_v_per_m: magnitude(f.field[0], f.field[1]),
            at: Point::new(p.r.abs(), p.z),
            potential_v: f.potential_v,
        });
        end_point = p;
        let grow = if err > 0.0 { growth(tol / err) } else { 5.0 };
        h *= grow;
    }
    let end_point = Point::new(end_point.r.abs(), end_point.z);
    let f_end = fm.at(end_point);
    let v_end = match end {
        LineEnd::Conductor { index } => fixed_potential(fm, FixedId::conductor(index)),
        LineEnd::Tank => 0.0,
        _ => f_end.potential_v,
    };
    if end != LineEnd::Stalled
        && line
            .samples
            .last()
            .is_none_or(|last| s > last.s_m * (1.0 + 1e-12))
    {
        line.samples.push(LineSample {
            s_m: s,
            e_v_per_m: magnitude(f_end.field[0], f_end.field[1]),
            at: end_point,
            potential_v: v_end,
        });
    }
    line.end = end;
    line.length_m = s;
    line.voltage_v = (v_start - v_end).abs();
    line
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::mesh::Mesh;

    /// The growth without the power where it is clamped is the clamped power itself.
    #[test]
    fn growth_shortcut_is_the_clamped_power() {
        let full = |q: f64| (0.9 * q.powf(0.2)).clamp(1.0, 5.0);
        let mut qs = vec![
            0.0,
            1e-300,
            1.69,
            1.69f64.next_up(),
            6000.0,
            6000f64.next_down(),
        ];
        qs.extend([f64::INFINITY, f64::MAX, f64::MIN_POSITIVE]);
        qs.extend((0..20_000).map(|k| 10f64.powf(-3.0 + 8.0 * k as f64 / 19_999.0)));
        for q in qs {
            assert_eq!(growth(q).to_bits(), full(q).to_bits(), "at {q}");
        }
        assert!(growth(f64::NAN).is_nan() && full(f64::NAN).is_nan());
    }

    /// The end test with each cell's shape lists (bounding boxes widened by 1e-9) gives the
    /// same answer as the test against every dielectric and vacuum region, at points all over
    /// the demo machine (examples/demo_750kv.toml, an invented machine: insulators, a vacuum
    /// bore, electrodes) and just either side of every grid line.
    #[test]
    fn end_test_by_cell_agrees_with_every_shape() {
        let text = include_str!("../examples/demo_750kv.toml");
        let model = crate::design::from_str(text, "demo_750kv.toml").expect("demo");
        let mesh = Mesh::build(&model).expect("mesh");
        let phi = vec![0.0; mesh.nodes()];
        let potentials = vec![0.0; model.conductors.len()];
        let fm = FieldMap::new(&mesh, &model, &phi, &potentials);
        let b = model.tank.bbox();
        let mut points = Vec::new();
        let (nr, nz) = (150, 600);
        for a in 0..=nr {
            for c in 0..=nz {
                let r = b.r_min + (b.r_max - b.r_min) * a as f64 / nr as f64;
                let z = b.z_min + (b.z_max - b.z_min) * c as f64 / nz as f64;
                points.push(Point::new(r, z));
            }
        }
        let (i_mid, j_mid) = (mesh.nr() / 2, mesh.nz() / 2);
        for &x in &mesh.r.x {
            for d in [x.next_down(), x, x.next_up()] {
                points.push(Point::new(d, mesh.z.x[j_mid]));
            }
        }
        for &x in &mesh.z.x {
            for d in [x.next_down(), x, x.next_up()] {
                points.push(Point::new(mesh.r.x[i_mid], d));
            }
        }
        let mut seen = [0usize; 3];
        for medium in [Medium::Gas, Medium::Vacuum] {
            let mut by_cell = Tracer::new(&fm, 1.0, medium, points[0]);
            let mut every = Tracer::new(&fm, 1.0, medium, points[0]);
            for boxes in [
                &mut every.near.dielectric_boxes,
                &mut every.near.vacuum_boxes,
            ] {
                boxes.fill([
                    f64::NEG_INFINITY,
                    f64::INFINITY,
                    f64::NEG_INFINITY,
                    f64::INFINITY,
                ]);
            }
            for &p in &points {
                let end = by_cell.end_at(p);
                assert_eq!(end, every.end_at(p), "at {p:?} in {medium:?}");
                match end {
                    Some(LineEnd::Dielectric { .. }) => seen[0] += 1,
                    Some(LineEnd::MediumBoundary) => seen[1] += 1,
                    Some(LineEnd::Conductor { .. }) => seen[2] += 1,
                    _ => {}
                }
            }
        }
        // The points meet insulators, vacuum boundaries and electrodes.
        assert!(seen.iter().all(|&n| n > 0), "{seen:?}");
    }
}
