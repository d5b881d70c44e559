//! Node classes: nodes inside conductors (or outside a spherical tank) are fixed to them.

use super::*;

/// The sampled point deepest inside a shape and its depth (about half the local thickness),
/// on a grid over the bounding box at a quarter of `cell`, at most 256 samples a side. When
/// no sample falls inside, the box centre and the sample spacing.
pub(super) fn deepest_point(shape: &Shape, cell: f64) -> (Point, f64) {
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

pub(super) fn thickness_hint(shape: &Shape) -> f64 {
    let b = shape.bbox();
    (b.r_max - b.r_min).min(b.z_max - b.z_min)
}

impl Mesh {
    /// Marks nodes inside conductors and outside the tank.
    pub(super) fn classify(&mut self, model: &Model) {
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
    pub(super) fn check_every_conductor_has_nodes(&self, model: &Model) -> Result<(), MeshError> {
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
}
