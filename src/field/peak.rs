//! Peaks of the surface field of conductors: the largest sample, and the maximum of the smooth
//! profile through the samples around it.

use super::*;

impl FieldMap<'_> {
    /// Peak surface field of every conductor, in conductor order.
    pub fn conductor_peaks(&self, samples: &[SurfaceSample]) -> Vec<ConductorPeak> {
        let mut peaks: Vec<ConductorPeak> = self
            .model
            .conductors
            .iter()
            .enumerate()
            .map(|(index, c)| ConductorPeak {
                index,
                name: c.name.clone(),
                potential_v: self.potentials[index],
                peak_surface_field_v_per_m: 0.0,
                at: Point::new(f64::NAN, f64::NAN),
                medium: Medium::Gas,
                samples: 0,
                scatter_v_per_m: 0.0,
            })
            .collect();
        let mut best: Vec<Option<&SurfaceSample>> = vec![None; peaks.len()];
        for s in samples {
            let Some(c) = s.conductor.conductor_index() else {
                continue;
            };
            peaks[c].samples += 1;
            if best[c].is_none_or(|b| s.e > b.e) {
                best[c] = Some(s);
            }
        }
        for (p, b) in peaks.iter_mut().zip(best) {
            if let Some(b) = b {
                let (top, scatter) = self.smooth_peak(samples, b);
                p.peak_surface_field_v_per_m = top.e;
                p.at = top.at;
                p.medium = top.medium;
                p.scatter_v_per_m = scatter;
            }
        }
        peaks
    }

    /// The maximum of the surface field near the largest sample `best`, taken from the smooth
    /// profile through the samples around it rather than from the one sample: a least-squares
    /// quadratic in arc length over the samples of the same conductor, medium and side within
    /// a window of 0.15 radius of curvature (at least 2.5 cells), maximised continuously. The
    /// individual samples scatter by a few 0.1 % with where the grid happens to cut the
    /// surface; the fitted maximum does not jump with the sampling. On the axis the profile is
    /// mirrored (it is even in r there). Where the surface is not resolved (a cell above half
    /// the radius of curvature), too few samples lie in the window, or the fit is not a
    /// maximum, the largest sample is kept.
    pub fn peak_near(&self, samples: &[SurfaceSample], best: &SurfaceSample) -> SurfaceSample {
        self.smooth_peak(samples, best).0
    }

    /// As [`FieldMap::peak_near`], with the RMS scatter of the samples about the fitted
    /// profile (0 when the largest sample is kept).
    pub fn smooth_peak(
        &self,
        samples: &[SurfaceSample],
        best: &SurfaceSample,
    ) -> (SurfaceSample, f64) {
        let Some(c) = best.conductor.conductor_index() else {
            return (*best, 0.0);
        };
        let shape = &self.model.conductors[c].shape;
        let rho = shape.min_radius_of_curvature();
        let h = self.spacing_at(best.at);
        if !(rho > 0.0 && h <= 0.5 * rho) {
            return (*best, 0.0);
        }
        let w = (0.15 * rho).max(2.5 * h);
        let n0 = best.normal;
        let t = Point::new(-n0.z, n0.r);
        let own = samples
            .iter()
            .filter(|s| s.conductor == best.conductor && s.medium == best.medium)
            .map(|s| (s.at, s.normal, s.e));
        let (pts, lo, hi) = profile(own, best.at, n0, w, |_| true);
        if pts.len() < 5 || lo > -0.2 || hi < 0.2 {
            return (*best, 0.0);
        }
        let Some(([a, b, c], scatter)) = quadratic_fit(&pts) else {
            return (*best, 0.0);
        };
        let (x_top, e_top) = if c < 0.0 && (-b / (2.0 * c)) >= lo && (-b / (2.0 * c)) <= hi {
            let x = -b / (2.0 * c);
            (x, a + b * x + c * x * x)
        } else {
            (0.0, a)
        };
        if !(e_top.is_finite() && e_top > 0.0) {
            return (*best, 0.0);
        }
        // The point on the tangent, brought back onto the surface along the normal.
        let guess = Point::new(best.at.r + t.r * x_top * w, best.at.z + t.z * x_top * w);
        let d = shape.sdf(guess);
        let n = shape.normal(guess);
        let at = Point::new((guess.r - d * n.r).max(0.0), guess.z - d * n.z);
        let top = SurfaceSample {
            at,
            e: e_top,
            e_normal: e_top.copysign(best.e_normal),
            normal: shape.normal(at),
            ..*best
        };
        (top, scatter)
    }
}

/// Least-squares quadratic y = a + b x + c x² through `pts` (x scaled to about ±1: the normal
/// equations are then well conditioned), with the RMS residual (three degrees of freedom
/// taken); `None` when fewer than four points or a singular system.
pub(super) fn quadratic_fit(pts: &[(f64, f64)]) -> Option<([f64; 3], f64)> {
    if pts.len() < 4 {
        return None;
    }
    let mut ata = nalgebra::Matrix3::<f64>::zeros();
    let mut aty = nalgebra::Vector3::<f64>::zeros();
    for &(x, y) in pts {
        let row = nalgebra::Vector3::new(1.0, x, x * x);
        ata += row * row.transpose();
        aty += row * y;
    }
    let coef = ata.lu().solve(&aty)?;
    let (a, b, c) = (coef[0], coef[1], coef[2]);
    let scatter = (pts
        .iter()
        .map(|&(x, y)| (y - (a + b * x + c * x * x)).powi(2))
        .sum::<f64>()
        / (pts.len() - 3) as f64)
        .sqrt();
    Some(([a, b, c], scatter))
}

/// The profile of the samples `(at, outward normal, value)` around `center` (normal `n0`):
/// those facing within 45° of it, within `w` of it and for which `joined` holds, as (arc
/// length along the tangent ÷ `w`, value), with the lowest and highest coordinate (0 at
/// least). Near the axis, with the normal along it, the profile is even in r and each sample
/// is mirrored to −r as well.
pub(super) fn profile(
    samples: impl Iterator<Item = (Point, Point, f64)>,
    center: Point,
    n0: Point,
    w: f64,
    joined: impl Fn(Point) -> bool,
) -> (Vec<(f64, f64)>, f64, f64) {
    let t = Point::new(-n0.z, n0.r);
    let mirror = center.r < w && n0.r.abs() < 0.2;
    let mut pts: Vec<(f64, f64)> = Vec::new();
    for (at, normal, value) in samples {
        if normal.r * n0.r + normal.z * n0.z < 0.7 {
            continue;
        }
        let mut add = |at: Point| {
            let (dr, dz) = (at.r - center.r, at.z - center.z);
            if dr * dr + dz * dz <= w * w && joined(at) {
                pts.push(((dr * t.r + dz * t.z) / w, value));
            }
        };
        add(at);
        if mirror && at.r > 0.0 {
            add(Point::new(-at.r, at.z));
        }
    }
    let (lo, hi) = pts
        .iter()
        .fold((0.0f64, 0.0f64), |(lo, hi), &(x, _)| (lo.min(x), hi.max(x)));
    (pts, lo, hi)
}
