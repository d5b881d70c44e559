//! The field along insulator surfaces: tangential samples where grid links cross a
//! dielectric's free surface.

use super::peak::{profile, quadratic_fit};
use super::*;

/// One point on an insulator surface with the tangential field there.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct InsulatorSample {
    /// Dielectric index.
    pub dielectric: usize,
    /// The point on the dielectric surface.
    pub at: Point,
    /// Outward unit normal of the dielectric (towards the gas or vacuum side).
    pub normal: Point,
    /// The medium on the outer side: `Gas` or `Vacuum`.
    pub side: Medium,
    /// Magnitude of the field component along the surface (in the (r, z) plane), V/m.
    pub e_tangential: f64,
    /// Magnitude of the whole field just outside the surface, V/m.
    pub e: f64,
}

impl FieldMap<'_> {
    /// The tangential field along the free surface of dielectric `index`: one sample where each
    /// grid link crosses its outline, on the outer (gas or vacuum) side. Points inside a
    /// conductor (an electrode clamping the insulator) or against another dielectric (a bulk
    /// interface, not a surface) are left out. The tangential component is continuous across
    /// the interface, so the interpolated field just outside gives it on both sides.
    pub fn insulator_samples(&self, index: usize) -> Vec<InsulatorSample> {
        let sites = self.mesh.insulator_sites(self.model, index);
        let sample = |site: &crate::mesh::InsulatorSite| {
            let n = site.normal;
            let f = self.one_sided_field(site, index);
            let tangent = [-n.z, n.r];
            InsulatorSample {
                dielectric: index,
                at: site.at,
                normal: n,
                side: if site.vacuum_side {
                    Medium::Vacuum
                } else {
                    Medium::Gas
                },
                e_tangential: (f.field[0] * tangent[0] + f.field[1] * tangent[1]).abs(),
                e: crate::geometry::magnitude(f.field[0], f.field[1]),
            }
        };
        // Each sample is its own fit: in parallel on long surfaces, in site order either way.
        if sites.len() >= PARALLEL_SITES {
            sites.par_iter().map(sample).collect()
        } else {
            sites.iter().map(sample).collect()
        }
    }
}

impl FieldMap<'_> {
    /// The conductors whose box comes within `reach` of `p`.
    fn conductors_near(&self, p: Point, reach: f64) -> Vec<&crate::geometry::Shape> {
        self.model
            .conductors
            .iter()
            .map(|c| &c.shape)
            .filter(|s| {
                let b = s.bbox();
                p.r + reach >= b.r_min
                    && p.r - reach <= b.r_max
                    && p.z + reach >= b.z_min
                    && p.z - reach <= b.z_max
            })
            .collect()
    }
}

/// Does the straight segment a → b pass through one of `shapes`? Marched by the signed
/// distance (which never overestimates), so a thin electrode between the two points is not
/// stepped over.
fn blocked(shapes: &[&crate::geometry::Shape], a: Point, b: Point) -> bool {
    let len = crate::geometry::magnitude(b.r - a.r, b.z - a.z);
    if len == 0.0 {
        return false;
    }
    let (r0, r1) = (a.r.min(b.r), a.r.max(b.r));
    let (z0, z1) = (a.z.min(b.z), a.z.max(b.z));
    shapes.iter().any(|s| {
        let bb = s.bbox();
        if bb.r_min > r1 || bb.r_max < r0 || bb.z_min > z1 || bb.z_max < z0 {
            return false;
        }
        let mut t = 0.0;
        for _ in 0..64 {
            let p = Point::new(a.r + t / len * (b.r - a.r), a.z + t / len * (b.z - a.z));
            let d = s.sdf(p);
            if d <= 0.0 {
                return true;
            }
            t += d.max(1e-6 * len);
            if t >= len {
                return false;
            }
        }
        false
    })
}

/// Insulator surfaces with this many sites are sampled in parallel.
const PARALLEL_SITES: usize = 512;

/// Nodes within this many cells of a surface point enter the one-sided fit of the field there.
const FIT_REACH_CELLS: f64 = 3.0;

impl FieldMap<'_> {
    /// The field at an insulator surface point, from one side of the interface only: the
    /// field of every free node of that medium within [`FIT_REACH_CELLS`] cells (its
    /// derivatives taken from neighbours of the same medium only, one-sided where the
    /// neighbour lies across the interface), fitted by least squares as linear in position and
    /// evaluated at the point. Across the interface the normal field jumps by the ratio of the
    /// permittivities and its slope with it, so an interpolation over both sides is wrong by
    /// a large fraction near a high-permittivity surface (a sphere of ε_r = 9.4 in a uniform
    /// field: 14 % at 12 cells per radius, and not falling with the cell); the tangential
    /// component is continuous, so either side gives it. The dielectric's side is used (its
    /// field is the smoother one: uniform inside a sphere in a uniform field), the outer side
    /// where the dielectric holds too few nodes (a thin wall), the interpolation of
    /// [`FieldMap::at`] where neither does.
    fn one_sided_field(&self, site: &crate::mesh::InsulatorSite, index: usize) -> PointField {
        let eps_in = self.model.dielectrics[index].eps_r;
        let (_, eps_out) = self.medium_at(site.outside);
        for eps in [eps_in, eps_out] {
            if let Some(e) = self.fit_field_at(site.at, eps) {
                return PointField {
                    at: site.at,
                    potential_v: f64::NAN,
                    field: e,
                };
            }
        }
        self.at(site.outside)
    }

    /// The field at `p` from a least-squares quadratic in (r, z) through the potentials of
    /// the free nodes of permittivity `eps` within [`FIT_REACH_CELLS`] cells: minus its
    /// gradient at `p`. `None` with fewer than ten such nodes.
    fn fit_field_at(&self, p: Point, eps: f64) -> Option<[f64; 2]> {
        let m = self.mesh;
        let h = self.spacing_at(p);
        let reach = FIT_REACH_CELLS * h;
        let (i0, i1) = (m.r.locate(p.r - reach), m.r.locate(p.r + reach) + 1);
        let (j0, j1) = (m.z.locate(p.z - reach), m.z.locate(p.z + reach) + 1);
        let same = |q: usize| (f64::from(m.eps_node[q]) - eps).abs() <= 1e-6 * eps;
        let near = self.conductors_near(p, reach);
        let mut ata = nalgebra::Matrix6::<f64>::zeros();
        let mut aty = nalgebra::Vector6::<f64>::zeros();
        let mut count = 0;
        for j in j0..=j1.min(m.nz() - 1) {
            for i in i0..=i1.min(m.nr() - 1) {
                let k = m.idx(i, j);
                if !m.fixed[k].is_free() || !same(k) {
                    continue;
                }
                let x = m.point(k);
                let (dr, dz) = ((x.r - p.r) / h, (x.z - p.z) / h);
                if dr * dr + dz * dz > FIT_REACH_CELLS * FIT_REACH_CELLS || blocked(&near, p, x) {
                    continue;
                }
                let row = nalgebra::Vector6::new(1.0, dr, dz, dr * dr, dr * dz, dz * dz);
                ata += row * row.transpose();
                aty += row * self.phi[k];
                count += 1;
            }
        }
        if count < 10 {
            return None;
        }
        let c = ata.lu().solve(&aty)?;
        let e = [-c[1] / h, -c[2] / h];
        e.iter().all(|v| v.is_finite()).then_some(e)
    }
}

/// The peak tangential field along one side (gas or vacuum) of one insulator's free surface.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct InsulatorPeak {
    /// Dielectric index.
    pub dielectric: usize,
    /// `Gas` or `Vacuum`.
    pub side: Medium,
    /// The peak tangential field, V/m: the maximum of the smooth profile through the samples
    /// around the largest one (see [`FieldMap::insulator_peak`]).
    pub e_tangential: f64,
    pub at: Point,
    /// The largest single sample, V/m.
    pub largest_sample: f64,
    /// Samples on this side of the surface.
    pub samples: usize,
    /// RMS scatter of the samples about the fitted profile, V/m (0 when the largest sample
    /// was kept).
    pub scatter_v_per_m: f64,
}

/// Half-width of the window of the smooth insulator profile, in cells at the largest sample,
/// on an outline without curved parts.
const INSULATOR_WINDOW_CELLS: f64 = 4.0;

/// Half-width of the window of the smooth insulator profile on a curved outline, in radii of
/// curvature: wider than a conductor's (0.15), because the tangential samples of a curved
/// interface scatter by a few per cent from node to node at every spacing (the permittivity
/// of a link is averaged across a curved interface, which leaves the potential of the nodes
/// next to it locally first order), so the profile must average over many samples; a
/// quadratic fit to the sin θ profile of a sphere over ±0.5 rad misplaces its maximum by
/// about 0.1 %.
const INSULATOR_WINDOW_RADII: f64 = 0.5;

impl FieldMap<'_> {
    /// The peak tangential field of each side (gas, then vacuum) of dielectric `index`.
    pub fn insulator_peaks(&self, index: usize) -> Vec<InsulatorPeak> {
        let samples = self.insulator_samples(index);
        [Medium::Gas, Medium::Vacuum]
            .into_iter()
            .filter_map(|side| self.insulator_peak(&samples, side))
            .collect()
    }

    /// The peak tangential field along one side of an insulator surface. The samples scatter
    /// with where the grid happens to cross the surface, so the peak is read from a smooth
    /// profile rather than from the largest sample: a least-squares quadratic in arc length
    /// over the samples of the same side and facing the same way (normals within 45°) within
    /// a window of the largest sample ([`INSULATOR_WINDOW_RADII`] of the outline's smallest
    /// radius of curvature and at least 2.5 cells; [`INSULATOR_WINDOW_CELLS`] cells on an
    /// outline with flat faces or sharp corners only) and joined to it along the
    /// surface (no conductor in between: an electrode that cuts through the insulator ends
    /// one stretch of surface and starts the next), maximised over the stretch sampled. On the
    /// axis the profile is mirrored (it is even in r there). With fewer than five samples or
    /// a stretch shorter than one window the largest sample is kept.
    pub fn insulator_peak(
        &self,
        samples: &[InsulatorSample],
        side: Medium,
    ) -> Option<InsulatorPeak> {
        let own: Vec<&InsulatorSample> = samples.iter().filter(|s| s.side == side).collect();
        let best = **own
            .iter()
            .max_by(|a, b| a.e_tangential.total_cmp(&b.e_tangential))?;
        let kept = InsulatorPeak {
            dielectric: best.dielectric,
            side,
            e_tangential: best.e_tangential,
            at: best.at,
            largest_sample: best.e_tangential,
            samples: own.len(),
            scatter_v_per_m: 0.0,
        };
        let h = self.spacing_at(best.at);
        // Flat (or sharp-cornered) outlines: a window of cells; a curved one as a conductor's
        // (0.15 of its radius of curvature, at least 2.5 cells).
        let rho = self.model.dielectrics[best.dielectric]
            .shape
            .min_radius_of_curvature();
        let w = if rho > 0.0 && rho.is_finite() {
            (INSULATOR_WINDOW_RADII * rho).max(2.5 * h)
        } else {
            INSULATOR_WINDOW_CELLS * h
        };
        let n0 = best.normal;
        let t = Point::new(-n0.z, n0.r);
        let near = self.conductors_near(best.at, w);
        let joined = |b: Point| !blocked(&near, best.at, b);
        let samples = own.iter().map(|s| (s.at, s.normal, s.e_tangential));
        let (pts, lo, hi) = profile(samples, best.at, n0, w, joined);
        if pts.len() < 5 || hi - lo < 1.0 {
            return Some(kept);
        }
        let Some(([a, b, c], scatter)) = quadratic_fit(&pts) else {
            return Some(kept);
        };
        let at_x = |x: f64| a + b * x + c * x * x;
        let mut x_top = if at_x(lo) >= at_x(hi) { lo } else { hi };
        if c < 0.0 {
            let v = -b / (2.0 * c);
            if v > lo && v < hi && at_x(v) > at_x(x_top) {
                x_top = v;
            }
        }
        let e_top = at_x(x_top);
        if !(e_top.is_finite() && e_top > 0.0) {
            return Some(kept);
        }
        let diel = &self.model.dielectrics[best.dielectric].shape;
        let guess = Point::new(best.at.r + t.r * x_top * w, best.at.z + t.z * x_top * w);
        let d = diel.sdf(guess);
        let n = diel.normal(guess);
        Some(InsulatorPeak {
            e_tangential: e_top,
            at: Point::new((guess.r - d * n.r).abs(), guess.z - d * n.z),
            scatter_v_per_m: scatter,
            ..kept
        })
    }
}

/// Triple junctions are looked for within this many local cells of an insulator.
pub const JUNCTION_REACH_CELLS: f64 = 1.5;

/// The field at one triple junction (conductor, insulator, gas or vacuum).
#[derive(Debug, Clone, Copy, Serialize)]
pub struct JunctionSample {
    pub conductor: FixedId,
    pub dielectric: usize,
    /// `Gas` or `Vacuum`.
    pub side: Medium,
    /// The highest conductor-surface sample on that side within
    /// [`JUNCTION_REACH_CELLS`] cells of the insulator.
    pub sample: SurfaceSample,
}

impl FieldMap<'_> {
    /// The triple junctions of dielectric `index`: per conductor and side (gas or vacuum) the
    /// highest conductor-surface sample within [`JUNCTION_REACH_CELLS`] cells (the local
    /// spacing at the sample) of the insulator, in the order first met. The reach shrinks with the grid, so on a finer grid
    /// the sample lies nearer the junction: where the field at the contact is finite the value
    /// converges to it, where the contact is singular it grows with every refinement.
    pub fn junction_samples(&self, samples: &[SurfaceSample], index: usize) -> Vec<JunctionSample> {
        let diel = &self.model.dielectrics[index];
        let mut best: Vec<JunctionSample> = Vec::new();
        for s in samples {
            if s.conductor.is_tank() || !matches!(s.medium, Medium::Gas | Medium::Vacuum) {
                continue;
            }
            if diel.shape.sdf(s.at).abs() > JUNCTION_REACH_CELLS * self.spacing_at(s.at) {
                continue;
            }
            match best
                .iter_mut()
                .find(|j| j.conductor == s.conductor && j.side == s.medium)
            {
                Some(entry) if entry.sample.e < s.e => entry.sample = *s,
                Some(_) => {}
                None => best.push(JunctionSample {
                    conductor: s.conductor,
                    dielectric: index,
                    side: s.medium,
                    sample: *s,
                }),
            }
        }
        best
    }
}
