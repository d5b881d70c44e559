//! Where links from free nodes meet fixed surfaces (the cut distances that make the boundary
//! second order), and the permittivity of every link.

use super::*;

pub(super) fn link_len(m: &Mesh, a: usize, b: usize) -> f64 {
    let (p, q) = (m.point(a), m.point(b));
    (q.r - p.r).hypot(q.z - p.z)
}

pub(super) fn shift(p: Point, dr: f64, dz: f64) -> Point {
    Point::new((p.r + dr).max(0.0), p.z + dz)
}

pub(super) fn weighted(a: f64, wa: f64, b: f64, wb: f64) -> f64 {
    let w = wa + wb;
    if w > 0.0 {
        (a * wa + b * wb) / w
    } else {
        0.5 * (a + b)
    }
}

/// Harmonic mean of the permittivity along the segment a → b, with at most one interface
/// located by root finding on the signed distance of the dielectric that holds one end.
pub(super) fn series_eps(model: &Model, a: Point, b: Point) -> f64 {
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

impl Mesh {
    /// Finds where links from free nodes meet fixed surfaces, and refuses conductors that a
    /// link jumps over.
    pub(super) fn find_cuts(&mut self, model: &Model) -> Result<(), MeshError> {
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
    pub(super) fn link_permittivities(&mut self, model: &Model) {
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
    pub(super) fn free_part(
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
