//! Charts, drawn by functions generic over plotters' `DrawingBackend` so the
//! canvas in the browser and SVG export share one drawing code.
//!
//! `scale` is the device pixel ratio: the backend is sized in device pixels,
//! and fonts, margins and line widths are multiplied by `scale` so charts are
//! crisp and equally proportioned at any ratio.

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;

use crate::state::Run;

/// Line colours: Okabe & Ito (2008) colour-blind-safe palette (blue,
/// vermillion). Species also differ by line style (solid, dashed).
pub const SPECIES_COLOURS: [RGBColor; 2] = [RGBColor(0, 114, 178), RGBColor(213, 94, 0)];

type DrawResult = Result<(), String>;

fn err<E: std::fmt::Debug>(e: E) -> String {
    format!("{e:?}")
}

fn px(scale: f64, css_px: f64) -> u32 {
    (css_px * scale).round().max(1.0) as u32
}

fn upper_bound(values: impl Iterator<Item = f64>) -> f64 {
    let max = values.filter(|v| v.is_finite()).fold(0.0_f64, f64::max);
    if max > 0.0 {
        max * 1.05
    } else {
        1.0
    }
}

type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// A chart area with both axes drawn and labelled.
fn axes<'a, DB: DrawingBackend>(
    root: &'a DrawingArea<DB, Shift>,
    scale: f64,
    (x_range, x_desc): (std::ops::Range<f64>, &str),
    (y_range, y_desc): (std::ops::Range<f64>, &str),
) -> Result<Chart<'a, DB>, String> {
    let font = ("sans-serif", 13.0 * scale);
    let mut chart = ChartBuilder::on(root)
        .margin(px(scale, 10.0))
        .margin_right(px(scale, 24.0))
        .x_label_area_size(px(scale, 36.0))
        .y_label_area_size(px(scale, 56.0))
        .build_cartesian_2d(x_range, y_range)
        .map_err(err)?;
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .label_style(font)
        .axis_desc_style(font)
        .x_label_formatter(&|v| tick(*v))
        .y_label_formatter(&|v| tick(*v))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(err)?;
    Ok(chart)
}

/// A tick label without trailing zeros: `20`, `2.5`, `1e6`.
pub fn tick(v: f64) -> String {
    if v != 0.0 && (v.abs() >= 1e6 || v.abs() < 1e-3) {
        return format!("{v:.1e}");
    }
    let s = format!("{v:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// Densities of every species against time.
pub fn draw_time_series<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    run: &Run,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let traj = &run.trajectory;
    let problem = &run.problem;
    let t_max = problem.t_end;
    let y_max = upper_bound((0..traj.n_species).flat_map(|i| traj.series(i)));
    let font = ("sans-serif", 13.0 * scale);
    let mut chart = axes(
        root,
        scale,
        (0.0..t_max, &format!("time ({})", problem.time_unit)),
        (0.0..y_max, "density (individuals)"),
    )?;
    for i in 0..traj.n_species {
        let colour = SPECIES_COLOURS[i % SPECIES_COLOURS.len()];
        let style = colour.stroke_width(px(scale, 2.0));
        let points: Vec<(f64, f64)> = traj.times.iter().copied().zip(traj.series(i)).collect();
        let name = problem.species[i].clone();
        let legend_style = style;
        if i == 0 {
            chart
                .draw_series(LineSeries::new(points, style))
                .map_err(err)?
                .label(name)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], legend_style));
        } else {
            let dash = px(scale, 6.0);
            chart
                .draw_series(DashedLineSeries::new(points, dash, dash, style))
                .map_err(err)?
                .label(name)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 8, y)], legend_style));
        }
    }
    chart
        .configure_series_labels()
        .label_font(font)
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(180, 180, 180))
        .position(SeriesLabelPosition::UpperRight)
        .draw()
        .map_err(err)?;
    root.present().map_err(err)
}

/// The trajectory in the plane of the two densities (species 0 across,
/// species 1 up), with its starting point marked.
pub fn draw_phase_plane<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    run: &Run,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let traj = &run.trajectory;
    let problem = &run.problem;
    if traj.n_species < 2 {
        return root.present().map_err(err);
    }
    let x_max = upper_bound(traj.series(0));
    let y_max = upper_bound(traj.series(1));
    let mut chart = axes(
        root,
        scale,
        (0.0..x_max, &format!("{} (individuals)", problem.species[0])),
        (0.0..y_max, &format!("{} (individuals)", problem.species[1])),
    )?;
    let points: Vec<(f64, f64)> = traj.states.iter().map(|s| (s[0], s[1])).collect();
    let ink = RGBColor(40, 40, 40);
    chart
        .draw_series(LineSeries::new(
            points.iter().copied(),
            ink.stroke_width(px(scale, 2.0)),
        ))
        .map_err(err)?;
    if let Some(&start) = points.first() {
        chart
            .draw_series(std::iter::once(Circle::new(
                start,
                px(scale, 4.0),
                ink.filled(),
            )))
            .map_err(err)?;
    }
    root.present().map_err(err)
}

#[cfg(test)]
mod tests {
    use super::tick;

    #[test]
    fn tick_labels_are_short() {
        for (v, expected) in [
            (0.0, "0"),
            (20.0, "20"),
            (2.5, "2.5"),
            (0.125, "0.125"),
            (1e7, "1.0e7"),
            (0.0002, "2.0e-4"),
        ] {
            assert_eq!(tick(v), expected, "{v}");
        }
    }
}
