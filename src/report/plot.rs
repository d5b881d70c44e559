//! SVG figures for the review note, drawn with plotters: the peak surface field of every
//! conductor along the column, the surface field along the most stressed conductors, the
//! margin bars with the design factor marked, and the sweep plot (the field maps are in
//! `fieldmap`).
//!
//! Input: the fine analysis and the report. Output: SVG documents as strings.

use crate::analysis::Analysis;
use crate::model::Model;
use crate::report::Report;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

/// A figure that cannot be drawn: reported, never silently dropped. The drawing library's
/// error is generic over its backend, so its message is kept.
#[derive(Debug, thiserror::Error)]
#[error("figure could not be drawn: {reason}")]
pub struct PlotError {
    pub reason: String,
}

/// An SVG figure, or why it cannot be drawn.
pub type PlotResult = Result<String, PlotError>;

fn err<E: std::fmt::Display>(e: E) -> PlotError {
    PlotError {
        reason: e.to_string(),
    }
}

/// The chart of an x–y figure with a legend: white page, caption, axis labels; `draw` adds
/// the labelled series.
type XyChart<'a, 'b> =
    ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

struct Frame<'t> {
    size: (u32, u32),
    caption: &'t str,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    x_desc: &'t str,
    y_desc: &'t str,
}

fn xy_figure(
    frame: Frame<'_>,
    draw: impl FnOnce(&mut XyChart<'_, '_>) -> Result<(), PlotError>,
) -> PlotResult {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, frame.size).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(frame.caption, ("sans-serif", 16))
            .margin(10)
            .x_label_area_size(40)
            .y_label_area_size(55)
            .build_cartesian_2d(frame.x, frame.y)
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc(frame.x_desc)
            .y_desc(frame.y_desc)
            .draw()
            .map_err(err)?;
        draw(&mut chart)?;
        chart
            .configure_series_labels()
            .background_style(WHITE)
            .border_style(BLACK)
            .draw()
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// Peak surface field of every conductor against the z of its peak.
pub fn column_field(report: &Report) -> PlotResult {
    let pts: Vec<(f64, f64)> = report
        .conductors
        .iter()
        .filter(|c| c.at_m[1].is_finite())
        .map(|c| (c.at_m[1] * 1e3, c.peak_surface_field_v_per_m / 1e6))
        .collect();
    let zmax = pts.iter().map(|p| p.0).fold(0.0, f64::max).max(1.0);
    let emax = pts.iter().map(|p| p.1).fold(0.0, f64::max).max(1e-3);
    xy_figure(
        Frame {
            size: (640, 360),
            caption: "Peak surface field of each conductor",
            x: 0.0..zmax * 1.05,
            y: 0.0..emax * 1.1,
            x_desc: "z of the peak (mm)",
            y_desc: "peak |E| (kV/mm)",
        },
        |chart| {
            chart
                .draw_series(pts.iter().map(|&p| Circle::new(p, 3, BLUE.filled())))
                .map_err(err)?
                .label("conductor peak")
                .legend(|(x, y)| Circle::new((x, y), 3, BLUE.filled()));
            Ok(())
        },
    )
}

/// Bars of the worst margins with the design factor marked.
pub fn margin_bars(report: &Report, rows: usize) -> PlotResult {
    let bars: Vec<(String, f64, f64)> = report
        .margins
        .iter()
        .filter_map(|r| {
            r.margin.map(|m| {
                (
                    format!("{} - {}", r.item, r.criterion_label_qualified()),
                    m,
                    r.margin_ideal.unwrap_or(m),
                )
            })
        })
        .take(rows)
        .collect();
    let n = bars.len().max(1);
    let mmax = bars
        .iter()
        .map(|b| b.1)
        .fold(report.design_factor, f64::max)
        * 1.15;
    let height = (60 + 22 * n as u32).max(200);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (760, height)).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                "Worst margins (limit / peak); red line: design factor",
                ("sans-serif", 16),
            )
            .margin(10)
            .x_label_area_size(35)
            .y_label_area_size(10)
            .build_cartesian_2d(0.0..mmax, 0.0..n as f64)
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc("margin")
            .disable_y_axis()
            .disable_y_mesh()
            .draw()
            .map_err(err)?;
        chart
            .draw_series(bars.iter().enumerate().map(|(k, b)| {
                let y = (n - 1 - k) as f64;
                let colour = if b.1 < report.design_factor {
                    RGBColor(200, 40, 40)
                } else if b.1 < 1.1 * report.design_factor {
                    RGBColor(230, 160, 30)
                } else {
                    RGBColor(60, 120, 190)
                };
                Rectangle::new([(0.0, y + 0.15), (b.1, y + 0.85)], colour.filled())
            }))
            .map_err(err)?;
        chart
            .draw_series(bars.iter().enumerate().map(|(k, b)| {
                let y = (n - 1 - k) as f64 + 0.5;
                Text::new(
                    b.0.clone(),
                    (mmax * 0.01, y),
                    ("sans-serif", 11).into_font().color(&WHITE),
                )
            }))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![
                    (report.design_factor, 0.0),
                    (report.design_factor, n as f64),
                ],
                RED.stroke_width(2),
            )))
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// Worst margin (and worst gas margin) against the swept value, with the design factor.
pub fn sweep_plot(
    parameter: &str,
    unit_scale: f64,
    unit: &str,
    points: &[crate::sweep::SweepPoint],
    design_factor: f64,
) -> PlotResult {
    let xs: Vec<f64> = points.iter().map(|p| p.value_si / unit_scale).collect();
    let (x0, x1) = xs
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    let ymax = points
        .iter()
        .filter_map(|p| p.worst_margin)
        .fold(design_factor, f64::max)
        * 1.15;
    let worst: Vec<(f64, f64)> = xs
        .iter()
        .zip(points)
        .filter_map(|(&x, p)| p.worst_margin.map(|m| (x, m)))
        .collect();
    let gas: Vec<(f64, f64)> = xs
        .iter()
        .zip(points)
        .filter_map(|(&x, p)| p.worst_gas_margin.map(|m| (x, m)))
        .collect();
    let caption = format!("Worst margin against {parameter}");
    let x_desc = format!("{parameter} ({unit})");
    xy_figure(
        Frame {
            size: (640, 380),
            caption: &caption,
            x: x0..x1,
            y: 0.0..ymax,
            x_desc: &x_desc,
            y_desc: "margin",
        },
        |chart| {
            chart
                .draw_series(LineSeries::new(worst.clone(), BLUE.stroke_width(2)))
                .map_err(err)?
                .label("worst margin")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLUE.stroke_width(2)));
            chart
                .draw_series(worst.iter().map(|&p| Circle::new(p, 3, BLUE.filled())))
                .map_err(err)?;
            chart
                .draw_series(LineSeries::new(gas, GREEN.stroke_width(1)))
                .map_err(err)?
                .label("worst gas margin")
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], GREEN.stroke_width(1))
                });
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(x0, design_factor), (x1, design_factor)],
                    RED.stroke_width(2),
                )))
                .map_err(err)?
                .label("design factor")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], RED.stroke_width(2)));
            Ok(())
        },
    )
}

/// |E| along the surface of the most stressed conductors: each sample placed by its angle
/// around the centre of the conductor's bounding box (0° = outward along +r, 90° = +z).
pub fn surface_profiles(model: &Model, fine: &Analysis, conductors: usize) -> PlotResult {
    let mut order: Vec<usize> = (0..fine.peaks.len()).collect();
    order.sort_by(|&a, &b| {
        fine.peaks[b]
            .peak_surface_field_v_per_m
            .total_cmp(&fine.peaks[a].peak_surface_field_v_per_m)
    });
    order.truncate(conductors);
    let palette = [BLUE, RED, GREEN, MAGENTA, CYAN];
    let mut curves = Vec::new();
    let mut emax: f64 = 1e-3;
    for (n, &k) in order.iter().enumerate() {
        let b = model.conductors[k].shape.bbox();
        let (cr, cz) = (0.5 * (b.r_min + b.r_max), 0.5 * (b.z_min + b.z_max));
        let mut pts: Vec<(f64, f64)> = fine
            .samples
            .iter()
            .filter(|s| s.conductor.conductor_index() == Some(k))
            .map(|s| {
                let ang = (s.at.z - cz).atan2(s.at.r - cr).to_degrees();
                (ang, s.e / 1e6)
            })
            .collect();
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        emax = pts.iter().map(|p| p.1).fold(emax, f64::max);
        curves.push((
            model.conductors[k].name.clone(),
            palette[n % palette.len()],
            pts,
        ));
    }
    xy_figure(
        Frame {
            size: (640, 380),
            caption: "Surface field along the most stressed conductors",
            x: -180.0..180.0,
            y: 0.0..emax * 1.1,
            x_desc: "angle around the conductor's centre (degrees; 0 = +r, 90 = +z)",
            y_desc: "|E| on the surface (kV/mm)",
        },
        |chart| {
            for (name, colour, pts) in curves {
                chart
                    .draw_series(pts.iter().map(|&p| Circle::new(p, 2, colour.filled())))
                    .map_err(err)?
                    .label(name)
                    .legend(move |(x, y)| Circle::new((x, y), 3, colour.filled()));
            }
            Ok(())
        },
    )
}
