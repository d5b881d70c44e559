//! Insulator sites: the nodes next to each insulator's surface, found once and kept.

use super::*;

impl Mesh {
    /// The free-surface sites of dielectric `index` of `model` (the model this mesh was built
    /// from), computed for every dielectric on first use.
    pub(crate) fn insulator_sites(&self, model: &Model, index: usize) -> &[InsulatorSite] {
        let all = self.insulator_sites.get_or_init(|| {
            (0..model.dielectrics.len())
                .map(|d| self.find_insulator_sites(model, d))
                .collect()
        });
        all.get(index).map_or(&[], |v| v.as_slice())
    }

    /// The field fits of every insulator site of `model` (indexed as `insulator_sites`),
    /// formed by `form` on first use; `None` where a site has no fit.
    pub fn insulator_fits(
        &self,
        form: impl FnOnce() -> Vec<Vec<Option<SiteFit>>>,
    ) -> &[Vec<Option<SiteFit>>] {
        self.insulator_fits.get_or_init(form)
    }

    pub(super) fn find_insulator_sites(&self, model: &Model, index: usize) -> Vec<InsulatorSite> {
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
}
