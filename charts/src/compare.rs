//! Comparing variants of a scenario: one species over time in each.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use tussock_core::run::Run;

use crate::{
    axes, draw_line, err, font_size, legend, legend_entry, note, plot_map, px, series_look,
    text_at, upper_bound, AxisDesc, Dash, DrawResult, LegendSample, INK,
};

/// The density of species `species` (state order) against time in several
/// named runs, the first being the current scenario: a colour and a line
/// pattern per variant, the names in the legend. The current scenario's
/// economic threshold is drawn when it has one and `species` is its pest.
/// A variant without that species is left out, with a note.
pub fn draw_variants<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    variants: &[(&str, &Run)],
    species: usize,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let usable: Vec<(usize, &str, &Run)> = variants
        .iter()
        .enumerate()
        .filter(|(_, (_, run))| species < run.trajectory.n_species)
        .map(|(k, (name, run))| (k, *name, *run))
        .collect();
    let current = variants.first().map(|(_, run)| *run);
    let threshold = current
        .filter(|run| run.problem.thresholds.pest == species)
        .and_then(|run| run.problem.thresholds.economic_threshold)
        .filter(|t| t.is_finite());
    let t_end = usable
        .iter()
        .flat_map(|(_, _, run)| run.trajectory.times.last().copied())
        .chain(current.map(|run| run.problem.t_end))
        .filter(|t| t.is_finite() && *t > 0.0)
        .fold(0.0, f64::max);
    let t_end = if t_end > 0.0 { t_end } else { 1.0 };
    let y_max = upper_bound(
        usable
            .iter()
            .flat_map(|(_, _, run)| run.trajectory.series(species))
            .chain(threshold),
    );
    let name = current
        .and_then(|run| run.problem.species.get(species).cloned())
        .unwrap_or_else(|| format!("species {}", species + 1));
    let unit = current.map_or("", |run| run.problem.time_unit.as_str());
    let x_label = format!("time ({unit})");
    let y_label = format!("{name} (individuals)");
    let mut chart = axes(
        root,
        scale,
        AxisDesc::linear(0.0..t_end, &x_label),
        AxisDesc::linear(0.0..y_max, &y_label),
    )?;
    let map = plot_map(&chart, false, false);
    if let Some(level) = threshold {
        let style = INK.stroke_width(px(scale, 1.5));
        draw_line(
            &mut chart,
            [(0.0, level), (t_end, level)],
            style,
            Dash::Long,
            scale,
        )?;
        let (x, y) = map.pixel_of((0.0, level));
        text_at(
            root,
            "economic threshold",
            (
                x as i32 + px(scale, 4.0) as i32,
                y as i32 - px(scale, 2.0) as i32,
            ),
            (HPos::Left, VPos::Bottom),
            font_size(scale, 11.0),
            INK,
        )?;
    }
    for &(k, name, run) in &usable {
        let look = series_look(k);
        let width = if k == 0 { 2.5 } else { 2.0 };
        let points = run
            .trajectory
            .times
            .iter()
            .copied()
            .zip(run.trajectory.series(species));
        let style = look.colour.stroke_width(px(scale, width));
        draw_line(&mut chart, points, style, look.dash, scale)?;
        legend_entry(
            &mut chart,
            name,
            LegendSample::line(look.colour, px(scale, width), look.dash, scale),
        )?;
    }
    if usable.is_empty() {
        note(root, &map, 0, "no runs to compare", scale)?;
    } else {
        legend(&mut chart, scale, SeriesLabelPosition::UpperRight)?;
    }
    let skipped: Vec<&str> = variants
        .iter()
        .filter(|(_, run)| species >= run.trajectory.n_species)
        .map(|(name, _)| *name)
        .collect();
    if !skipped.is_empty() {
        let text = format!("without {name}: {}", skipped.join(", "));
        note(root, &map, usize::from(usable.is_empty()), &text, scale)?;
    }
    Ok(map)
}
