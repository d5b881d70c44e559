//! Insulator leakage in parallel with the gaps of a grading column.
//!
//! Input: a `model::Model` and a column index. Output: the bulk leakage resistance across each
//! gap through the insulators that span it, from their materials' volume resistivity
//! (`materials::VOLUME_RESISTIVITY_OHM_M`, common practice values), with the paths
//! found and what was left out.
//!
//! A gap runs between two node planes: the electrode planes of the column, and at each end the
//! face of the end conductor towards the column (or one pitch beyond the last electrode when
//! that face is not within two pitches). An insulator counts for a gap when its cross-section
//! is non-empty at every sampled plane of the gap; its resistance is the series integral
//! R = ∫ ρ dz / A(z) over the gap, with A(z) the area of its annular cross-section at height
//! z (midpoint rule in z and in r). Conductors cutting through an insulator (disc electrodes)
//! are not subtracted and surface leakage is not included, which the report states.

use crate::geometry::{Point, Shape};
use crate::materials;
use crate::model::Model;
use serde::Serialize;

/// Planes sampled across each gap.
const Z_SAMPLES: usize = 8;
/// Radial samples across an insulator's cross-section.
const R_SAMPLES: usize = 400;

/// One insulator that conducts across the gaps of a column.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LeakagePath {
    pub dielectric: String,
    pub material: String,
    pub resistivity_ohm_m: f64,
    /// Its resistance across each gap, Ohm (None where it does not span the gap).
    pub per_gap_ohm: Vec<Option<f64>>,
}

/// The leakage across every gap of a column.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColumnLeakage {
    /// All paths in parallel, Ohm, per gap (None where no insulator spans the gap).
    pub per_gap_ohm: Vec<Option<f64>>,
    pub paths: Vec<LeakagePath>,
    /// Insulators left out, and why.
    pub notes: Vec<String>,
}

/// The z of each node plane of column `column`: node 0 (the `from` end) to node N + 1.
pub fn node_planes(model: &Model, column: usize) -> Vec<f64> {
    let Some(col) = model.columns.get(column) else {
        return Vec::new();
    };
    let z: Vec<f64> = col
        .electrodes
        .iter()
        .filter_map(|&k| model.conductors.get(k))
        .map(|c| match c.shape {
            Shape::Torus { center_z, .. } => center_z,
            _ => {
                let b = c.shape.bbox();
                0.5 * (b.z_min + b.z_max)
            }
        })
        .collect();
    if z.is_empty() {
        return z;
    }
    let pitch = if z.len() > 1 { z[1] - z[0] } else { 0.0 };
    let end_plane = |end: Option<usize>, inner: f64, outward: f64| -> f64 {
        let regular = inner + outward * pitch.abs();
        let Some(c) = end.and_then(|k| model.conductors.get(k)) else {
            return regular;
        };
        let b = c.shape.bbox();
        // The face of the end conductor towards the column.
        let face = if outward < 0.0 { b.z_max } else { b.z_min };
        let d = (face - inner) * outward;
        if pitch != 0.0 && d > 0.0 && d < 2.0 * pitch.abs() {
            face
        } else {
            regular
        }
    };
    let sign = if pitch < 0.0 { -1.0 } else { 1.0 };
    let mut planes = Vec::with_capacity(z.len() + 2);
    planes.push(end_plane(col.from, z[0], -sign));
    planes.extend_from_slice(&z);
    planes.push(end_plane(col.to, z[z.len() - 1], sign));
    planes
}

/// Area of the cross-section of `shape` at height z, m² (midpoint rule in r).
fn section_area(shape: &Shape, z: f64) -> f64 {
    let b = shape.bbox();
    if z <= b.z_min || z >= b.z_max || b.r_max <= b.r_min {
        return 0.0;
    }
    let dr = (b.r_max - b.r_min) / R_SAMPLES as f64;
    (0..R_SAMPLES)
        .map(|k| b.r_min + (k as f64 + 0.5) * dr)
        .filter(|&r| shape.contains(Point::new(r, z)))
        .map(|r| 2.0 * std::f64::consts::PI * r * dr)
        .sum()
}

/// Resistance of `shape` between planes za and zb at resistivity rho, Ohm, or None when its
/// cross-section vanishes somewhere between them.
fn resistance_between(shape: &Shape, rho: f64, za: f64, zb: f64) -> Option<f64> {
    let (lo, hi) = if za < zb { (za, zb) } else { (zb, za) };
    let dz = (hi - lo) / Z_SAMPLES as f64;
    if dz <= 0.0 {
        return None;
    }
    let mut r = 0.0;
    for k in 0..Z_SAMPLES {
        let a = section_area(shape, lo + (k as f64 + 0.5) * dz);
        if a <= 0.0 {
            return None;
        }
        r += rho * dz / a;
    }
    Some(r)
}

/// The bulk leakage across each gap of column `column` from the insulators' materials.
pub fn from_materials(model: &Model, column: usize) -> ColumnLeakage {
    let planes = node_planes(model, column);
    let gaps = planes.len().saturating_sub(1);
    let spans: Vec<(f64, f64)> = planes.windows(2).map(|w| (w[0], w[1])).collect();
    let mut paths = Vec::new();
    let mut notes = Vec::new();
    for d in &model.dielectrics {
        let Some(material) = &d.material else {
            // Only report insulators that reach along the column.
            let reaches = spans
                .iter()
                .any(|&(a, b)| resistance_between(&d.shape, 1.0, a, b).is_some());
            if reaches {
                notes.push(format!(
                    "'{}' gives eps_r without a material, so its leakage is not known and is \
                     left out; give `leakage` on the column to include it",
                    d.name
                ));
            }
            continue;
        };
        let Some(rho) = materials::volume_resistivity(material) else {
            continue;
        };
        let per_gap: Vec<Option<f64>> = spans
            .iter()
            .map(|&(a, b)| resistance_between(&d.shape, rho, a, b))
            .collect();
        if per_gap.iter().any(Option::is_some) {
            paths.push(LeakagePath {
                dielectric: d.name.clone(),
                material: material.clone(),
                resistivity_ohm_m: rho,
                per_gap_ohm: per_gap,
            });
        }
    }
    let per_gap_ohm = (0..gaps)
        .map(|g| {
            let gsum: f64 = paths
                .iter()
                .filter_map(|p| p.per_gap_ohm[g])
                .map(|r| 1.0 / r)
                .sum();
            (gsum > 0.0).then(|| 1.0 / gsum)
        })
        .collect();
    ColumnLeakage {
        per_gap_ohm,
        paths,
        notes,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_tube_has_the_resistance_of_its_annulus() {
        // R = ρ L / (π (r1² − r0²)) for a straight tube: Ohm's law for a uniform conductor.
        let tube = Shape::RoundedRect {
            r0: 0.045,
            r1: 0.060,
            z0: 0.0,
            z1: 1.0,
            corner_radius: 0.0,
        };
        let r = resistance_between(&tube, 1e12, 0.2, 0.245).expect("spans");
        let exact = 1e12 * 0.045 / (std::f64::consts::PI * (0.060f64.powi(2) - 0.045f64.powi(2)));
        assert!((r / exact - 1.0).abs() < 1e-3, "{r} vs {exact}");
        assert!(resistance_between(&tube, 1e12, 0.9, 1.1).is_none());
    }
}
