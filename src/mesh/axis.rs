//! Graded node lines: the features (flat faces, extents) a model puts on each axis, and the
//! geometric grading from `cell` up to `max_cell` between them.

use super::*;

/// A stretch of one axis where the spacing is at most `frac × cell`: (lo, hi, frac).
pub(super) type Band = (f64, f64, f64);

/// Extents of the features (fine spacing, each with its fraction of the cell) and the fixed
/// grid lines of a model.
pub(super) struct Features {
    dom: crate::geometry::BBox,
    r_feat: Vec<Band>,
    z_feat: Vec<Band>,
    r_fix: Vec<f64>,
    z_fix: Vec<f64>,
}

impl Features {
    pub(super) fn of(model: &Model, snap: bool) -> Features {
        let dom = model.tank.bbox();
        let spec = &model.mesh;
        let mut r_feat = Vec::new();
        let mut z_feat = Vec::new();
        let mut r_fix = vec![dom.r_min, dom.r_max];
        let mut z_fix = vec![dom.z_min, dom.z_max];
        let floor = 1.0 / crate::model::MAX_LOCAL_DIVISION;
        // Each conductor's and dielectric's neighbourhood at the cell (finer where the
        // accuracy loop refined it), its curved parts at `cells_per_radius` cells per radius
        // of curvature.
        let conductors =
            (model.conductors.iter().enumerate()).map(|(k, c)| (&c.shape, spec.refinement(k)));
        let dielectrics = (model.dielectrics.iter().enumerate())
            .map(|(k, d)| (&d.shape, spec.dielectric_refinement(k)));
        for (s, refine) in conductors.chain(dielectrics) {
            let refine = refine.clamp(floor, 1.0);
            let b = s.bbox();
            r_feat.push((b.r_min, b.r_max, refine));
            z_feat.push((b.z_min, b.z_max, refine));
            if spec.adaptive() {
                let start = 1.0 / crate::model::START_DIVISION;
                for (part, radius) in s.curved_parts() {
                    let frac = (radius / (spec.cells_per_radius * spec.cell)).clamp(start, 1.0);
                    let frac = (frac * refine).max(floor);
                    r_feat.push((part.r_min, part.r_max, frac));
                    z_feat.push((part.z_min, part.z_max, frac));
                }
            }
        }
        for v in &model.vacuum {
            let b = v.shape.bbox();
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
    pub(super) fn estimate(&self, spec: &crate::model::MeshSpec, limit_bytes: f64) -> MeshEstimate {
        self.estimate_and_axes(spec, limit_bytes).0
    }

    /// As `estimate`, also returning the graded axes when they were made.
    pub(super) fn estimate_and_axes(
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

    pub(super) fn axes(&self, spec: &crate::model::MeshSpec) -> (Axis, Axis) {
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
pub(super) fn axis_lower_bound(a: f64, b: f64, feats: &[Band], cell: f64, max_cell: f64) -> f64 {
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
pub(super) const BUCKETS_PER_LINE: usize = 4;

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

    /// As [`Axis::locate`], trying the cell `hint` and its two neighbours first (a point
    /// that moves a little stays in or next to its cell): the same index, found in a few
    /// comparisons.
    pub fn locate_near(&self, v: f64, hint: usize) -> usize {
        let x = &self.x;
        if hint + 1 < x.len() && v.is_finite() {
            if x[hint] <= v {
                if v < x[hint + 1] {
                    return hint;
                }
                if hint + 2 < x.len() && v < x[hint + 2] {
                    return hint + 1;
                }
            } else if hint > 0 && x[hint - 1] <= v {
                return hint - 1;
            }
        }
        self.locate(v)
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

/// Range of node indices whose coordinate lies within [lo, hi] (widened by one node).
pub(super) fn index_range(axis: &Axis, lo: f64, hi: f64) -> (usize, usize) {
    let n = axis.len();
    let i0 = axis.x.partition_point(|&x| x < lo).saturating_sub(1);
    let i1 = axis.x.partition_point(|&x| x <= hi).min(n - 1);
    (i0.min(n - 1), i1)
}

/// Target spacing at `x`: `frac × cell` inside a feature's extent, growing geometrically away
/// from it, never above `max_cell`.
pub(super) fn spacing_at(x: f64, feats: &[Band], cell: f64, max_cell: f64, growth: f64) -> f64 {
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
pub(super) fn grade_axis(
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
    fn locate_near_agrees_with_locate_from_any_hint() {
        // Spacing from 1 mm up to 80 mm and back: many lines per bucket where fine.
        let mut xs = vec![0.0];
        let mut h = 0.08;
        while *xs.last().unwrap() < 1.0 {
            let x: f64 = xs.last().unwrap() + h;
            xs.push(x);
            h = if x < 0.5 {
                (h / 1.3).max(1e-3)
            } else {
                (h * 1.3).min(0.08)
            };
        }
        let ax = Axis::new(xs);
        let n = ax.len();
        let mut probes: Vec<f64> = ax.x.clone();
        probes.extend(ax.x.windows(2).map(|w| 0.5 * (w[0] + w[1])));
        probes.extend(ax.x.iter().map(|x| x.next_down()));
        probes.extend((0..2_000).map(|k| -0.1 + 1.2 * k as f64 / 1_999.0));
        probes.extend([
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NAN,
            1e-300,
            1.0 - 1e-16,
        ]);
        for v in probes {
            let want = ax.locate(v);
            // The cell itself, its neighbours, far cells and hints off the axis.
            let hints = [
                want,
                want.saturating_sub(1),
                want + 1,
                want + 2,
                0,
                n - 2,
                n - 1,
                n + 5,
            ];
            for hint in hints {
                assert_eq!(ax.locate_near(v, hint), want, "at {v} from {hint}");
            }
        }
    }
}
