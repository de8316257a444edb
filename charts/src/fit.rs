//! Fitting: the residuals of a fit against time.

use plotters::coord::Shift;
use plotters::prelude::*;
use tussock_core::fit::{FitResult, Objective};

use crate::{
    axes, draw_line, draw_marks, err, extent, legend, legend_entry, note, padded, plot_map, px,
    AxisDesc, Dash, DrawResult, LegendSample, INK, SPECIES_COLOURS, SPECIES_MARKERS,
};

/// What a residual is on the fit's scale, for the axis label.
fn residual_words(objective: Objective) -> &'static str {
    match objective {
        Objective::LogLeastSquares => "residual (ln(observed + 1) − ln(predicted + 1))",
        Objective::LeastSquares => "residual (observed − predicted)",
        Objective::Poisson | Objective::NegativeBinomial => "deviance residual",
    }
}

/// The residuals of a fit against time, per species (its colour and
/// marker: circles for the first, triangles for the second), joined
/// thinly in time order so streaks show, over a line at zero.
///
/// `species` names the model's species (state order).
pub fn draw_residuals<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    fit: &FitResult,
    species: &[String],
    time_unit: &str,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let usable = || {
        fit.residuals
            .iter()
            .filter(|r| r.time.is_finite() && r.residual.is_finite())
    };
    let x_range = padded(extent(usable().map(|r| r.time)), 0.04);
    let y_range = padded(extent(usable().map(|r| r.residual).chain([0.0])), 0.08);
    let x_label = format!("time ({time_unit})");
    let mut chart = axes(
        root,
        scale,
        AxisDesc::linear(x_range, &x_label),
        AxisDesc::linear(y_range, residual_words(fit.objective_kind)),
    )?;
    let map = plot_map(&chart, false, false);
    draw_line(
        &mut chart,
        [(map.x.0, 0.0), (map.x.1, 0.0)],
        INK.stroke_width(px(scale, 1.0)),
        Dash::Solid,
        scale,
    )?;
    let mut present: Vec<usize> = usable().map(|r| r.species).collect();
    present.sort_unstable();
    present.dedup();
    for &i in &present {
        let mut points: Vec<(f64, f64)> = usable()
            .filter(|r| r.species == i)
            .map(|r| (r.time, r.residual))
            .collect();
        points.sort_by(|a, b| a.0.total_cmp(&b.0));
        let (colour, marker) = (SPECIES_COLOURS[i % 2], SPECIES_MARKERS[i % 2]);
        let thin = colour.mix(0.6).stroke_width(px(scale, 1.0));
        let dash = if i == 0 { Dash::Solid } else { Dash::Dashed };
        draw_line(&mut chart, points.iter().copied(), thin, dash, scale)?;
        draw_marks(&mut chart, &map, points, (marker, colour, true), scale)?;
        let name = species
            .get(i)
            .cloned()
            .unwrap_or_else(|| format!("species {}", i + 1));
        legend_entry(
            &mut chart,
            name,
            LegendSample::line(colour, px(scale, 1.0), dash, scale).with_marker(marker, true),
        )?;
    }
    if present.is_empty() {
        note(root, &map, 0, "no residuals to draw", scale)?;
    } else {
        legend(&mut chart, scale, SeriesLabelPosition::UpperRight)?;
    }
    Ok(map)
}
