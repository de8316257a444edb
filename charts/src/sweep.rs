//! Parameter sweeps: the bifurcation diagram of a line sweep and the
//! outcome map of a two-parameter sweep.

use std::collections::BTreeMap;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use tussock_core::analysis::LongRunKind;
use tussock_core::sweep::line::{BifurcationKind, LineSweep};
use tussock_core::sweep::map::{OutcomeClass, OutcomeMap};
use tussock_core::sweep::{AxisValues, Spacing};

use crate::{
    axes, axes_framed, draw_line, draw_marks, err, extent, font_size, label_in_plot, legend,
    legend_entry, note, padded, plot_map, px, text_at, upper_bound, AxisDesc, Dash, DrawResult,
    Frame, LegendSample, Mark, Marker, PlotMap, INK, OKABE_ITO, SPECIES_COLOURS,
};

/// A value as drawn on an axis of this spacing: its log10 on a log axis
/// (not a number for values ≤ 0, which a log axis cannot show).
fn drawn(spacing: Spacing, v: f64) -> f64 {
    match spacing {
        Spacing::Linear => v,
        Spacing::Log if v > 0.0 => v.log10(),
        Spacing::Log => f64::NAN,
    }
}

fn axis_label(label: &str, spacing: Spacing) -> String {
    match spacing {
        Spacing::Linear => label.to_string(),
        Spacing::Log => format!("{label} (log scale)"),
    }
}

/// The word for a kind of bifurcation, as labelled on the chart.
pub fn bifurcation_label(kind: BifurcationKind) -> &'static str {
    match kind {
        BifurcationKind::Hopf => "Hopf",
        BifurcationKind::Transcritical => "transcritical",
        BifurcationKind::SaddleNode => "saddle-node",
    }
}

/// One equilibrium of a branch at one sweep value.
#[derive(Clone, Copy, Debug)]
struct OnBranch {
    index: usize,
    value: f64,
    density: f64,
    stable: bool,
    feasible: bool,
}

/// Where a branch's piece ends between two of its points, if a located
/// bifurcation says.
type SplitAt<'a> = &'a dyn Fn(&OnBranch, &OnBranch) -> Option<(f64, f64)>;

/// A piece of a branch drawn in one style.
#[derive(Clone, Debug, PartialEq)]
struct Piece {
    stable: bool,
    points: Vec<(f64, f64)>,
}

/// Pieces of one branch in (value, density): joined across adjacent sweep
/// values, split where stability changes (at the located bifurcation
/// between the two values if there is one, else half way), cut where the
/// equilibrium stops being feasible (extended to the bifurcation where it
/// leaves, if located).
fn branch_pieces(entries: &[OnBranch], split_at: SplitAt<'_>) -> Vec<Piece> {
    let mut pieces = Vec::new();
    let mut open: Option<Piece> = None;
    let mut prev: Option<&OnBranch> = None;
    let at = |e: &OnBranch| (e.value, e.density);
    for e in entries {
        let joined = prev.filter(|p| e.index == p.index + 1);
        match joined {
            Some(p) if p.feasible && e.feasible => {
                let piece = open.get_or_insert_with(|| Piece {
                    stable: p.stable,
                    points: vec![at(p)],
                });
                if p.stable == e.stable {
                    piece.points.push(at(e));
                } else {
                    let middle = split_at(p, e)
                        .unwrap_or((0.5 * (p.value + e.value), 0.5 * (p.density + e.density)));
                    piece.points.push(middle);
                    pieces.extend(open.take());
                    open = Some(Piece {
                        stable: e.stable,
                        points: vec![middle, at(e)],
                    });
                }
            }
            Some(p) if p.feasible => {
                if let (Some(piece), Some(end)) = (open.as_mut(), split_at(p, e)) {
                    piece.points.push(end);
                }
                pieces.extend(open.take());
            }
            Some(p) if e.feasible => {
                pieces.extend(open.take());
                open = Some(Piece {
                    stable: e.stable,
                    points: split_at(p, e).into_iter().chain([at(e)]).collect(),
                });
            }
            _ => {
                pieces.extend(open.take());
                if e.feasible {
                    open = Some(Piece {
                        stable: e.stable,
                        points: vec![at(e)],
                    });
                }
            }
        }
        prev = Some(e);
    }
    pieces.extend(open);
    pieces
}

/// The bifurcation diagram of a line sweep for one species: its density
/// at each feasible equilibrium against the swept parameter (log10 axis
/// when the sweep's spacing is log), joined along branches, solid where
/// stable and dashed where not; the long-run minimum and maximum from
/// simulation as filled dots in the species' colour (one dot where they
/// agree, two where the run cycles); each located bifurcation as a dotted
/// vertical line labelled with its kind ("Hopf", "transcritical",
/// "saddle-node") and a diamond at its equilibrium.
///
/// `species` indexes `species_names` (state order); `param_label` names the
/// swept parameter in plain words.
pub fn draw_bifurcation<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    sweep: &LineSweep,
    species: usize,
    species_names: &[String],
    param_label: &str,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let spacing = sweep.axis.spacing;
    let x = |v: f64| drawn(spacing, v);
    let mut branches: BTreeMap<usize, Vec<OnBranch>> = BTreeMap::new();
    for point in &sweep.points {
        for e in &point.equilibria {
            let Some(&density) = e.equilibrium.state.get(species) else {
                continue;
            };
            branches.entry(e.branch).or_default().push(OnBranch {
                index: point.index,
                value: point.value,
                density,
                stable: e.equilibrium.stability.is_stable(),
                feasible: e.equilibrium.feasible && density.is_finite(),
            });
        }
    }
    let long_runs: Vec<(f64, f64, f64, bool)> = sweep
        .points
        .iter()
        .filter_map(|p| p.long_run.as_ref().map(|r| (p.value, r)))
        .filter(|(_, r)| {
            matches!(
                r.kind,
                LongRunKind::Equilibrium | LongRunKind::Cycle | LongRunKind::Extinction
            )
        })
        .filter_map(|(v, r)| {
            let (lo, hi) = (*r.min.get(species)?, *r.max.get(species)?);
            Some((v, lo, hi, r.kind == LongRunKind::Cycle))
        })
        .collect();
    let unbounded = sweep.points.iter().any(|p| {
        p.long_run
            .as_ref()
            .is_some_and(|r| r.kind == LongRunKind::Unbounded)
    });

    let x_range = padded(extent(sweep.points.iter().map(|p| x(p.value))), 0.02);
    let y_max = upper_bound(
        branches
            .values()
            .flatten()
            .filter(|e| e.feasible)
            .map(|e| e.density)
            .chain(long_runs.iter().flat_map(|r| [r.1, r.2])),
    );
    let name = species_names
        .get(species)
        .cloned()
        .unwrap_or_else(|| format!("species {}", species + 1));
    let x_label = axis_label(param_label, spacing);
    let y_label = format!("{name} (individuals)");
    // Bifurcation labels go above the plotting area, in two staggered
    // rows, so the legend and the data never hide them.
    let label_css = 11.0;
    let frame = Frame {
        top: if sweep.bifurcations.is_empty() {
            10.0
        } else {
            8.0 + 2.0 * label_css * 1.3
        },
        ..Frame::default()
    };
    let mut chart = axes_framed(
        root,
        scale,
        AxisDesc::new(x_range, &x_label, spacing == Spacing::Log),
        AxisDesc::linear(0.0..y_max, &y_label),
        frame,
    )?;
    let map = plot_map(&chart, spacing == Spacing::Log, false);

    // Bifurcations under everything else.
    let guide = RGBColor(120, 120, 120).stroke_width(px(scale, 1.0));
    let label_size = font_size(scale, label_css);
    let mut shown = 0;
    for b in &sweep.bifurcations {
        let bx = x(b.value);
        if !(bx.is_finite() && map.holds((bx, map.y.0))) {
            continue;
        }
        draw_line(
            &mut chart,
            [(bx, map.y.0), (bx, map.y.1)],
            guide,
            Dash::Dotted,
            scale,
        )?;
        let (px_x, _) = map.pixel_of((bx, 0.0));
        let rise = (2 - shown % 2) as f64 * label_size * 1.3;
        shown += 1;
        text_at(
            root,
            bifurcation_label(b.kind),
            (
                px_x as i32,
                map.pixels_y.0 - rise as i32 + px(scale, 2.0) as i32,
            ),
            (HPos::Center, VPos::Top),
            label_size,
            INK,
        )?;
    }

    // Branches.
    let split_at = |p: &OnBranch, e: &OnBranch, branch: usize| {
        let (lo, hi) = (p.value.min(e.value), p.value.max(e.value));
        sweep
            .bifurcations
            .iter()
            .filter(|b| b.branch == branch || b.partner == Some(branch))
            .find(|b| b.value >= lo && b.value <= hi)
            .and_then(|b| Some((b.value, *b.state.get(species)?)))
    };
    let line = INK.stroke_width(px(scale, 2.0));
    for (&branch, entries) in &branches {
        let pieces = branch_pieces(entries, &|p, e| split_at(p, e, branch));
        for piece in pieces {
            let points: Vec<(f64, f64)> = piece.points.iter().map(|&(v, d)| (x(v), d)).collect();
            if let [only] = points[..] {
                let look = (Marker::Circle, INK, piece.stable);
                draw_marks(&mut chart, &map, [only], look, scale * 0.6)?;
                continue;
            }
            let dash = if piece.stable {
                Dash::Solid
            } else {
                Dash::Dashed
            };
            draw_line(&mut chart, points, line, dash, scale)?;
        }
    }

    // Long-run extremes.
    let colour = SPECIES_COLOURS[species % 2];
    let dots = long_runs.iter().flat_map(|&(v, lo, hi, cycle)| {
        let top = (x(v), hi);
        let bottom = cycle.then_some((x(v), lo));
        std::iter::once(top).chain(bottom)
    });
    let dots: Vec<Mark<(f64, f64)>> = dots
        .filter(|&p| map.holds(p))
        .map(|p| Mark::new(p, Marker::Circle, colour, true, scale * 0.6))
        .collect();
    chart.draw_series(dots).map_err(err)?;
    let marks: Vec<Mark<(f64, f64)>> = sweep
        .bifurcations
        .iter()
        .filter_map(|b| Some((x(b.value), *b.state.get(species)?)))
        .filter(|&p| map.holds(p))
        .map(|p| Mark::new(p, Marker::Diamond, INK, true, scale))
        .collect();
    chart.draw_series(marks).map_err(err)?;

    let thin = px(scale, 2.0);
    legend_entry(
        &mut chart,
        "stable equilibrium",
        LegendSample::line(INK, thin, Dash::Solid, scale),
    )?;
    legend_entry(
        &mut chart,
        "unstable equilibrium",
        LegendSample::line(INK, thin, Dash::Dashed, scale),
    )?;
    legend_entry(
        &mut chart,
        "long-run min and max (simulated)",
        LegendSample::marker(colour, Marker::Circle, true, scale),
    )?;
    // Upper left: enrichment pushes branches and cycles up to the right.
    legend(&mut chart, scale, SeriesLabelPosition::UpperLeft)?;

    let mut notes = Vec::new();
    if sweep.points.is_empty() {
        notes.push("no values computed yet".to_string());
    }
    if !sweep.failed.is_empty() {
        notes.push(format!("{} values failed (left out)", sweep.failed.len()));
    }
    if unbounded {
        notes.push("unbounded growth at some values (not drawn)".to_string());
    }
    if sweep.partial && !sweep.points.is_empty() {
        notes.push("stopped before every value was computed".to_string());
    }
    // Below the legend's three rows.
    for (line, text) in notes.iter().enumerate() {
        note(root, &map, 5 + line, text, scale)?;
    }
    Ok(map)
}

/// Boundary curves: near-black, thin.
const BOUNDARY: RGBColor = RGBColor(17, 17, 17);

/// Every class, in the order a legend lists them.
const CLASS_ORDER: [OutcomeClass; 8] = [
    OutcomeClass::OnlySpecies1,
    OutcomeClass::OnlySpecies2,
    OutcomeClass::Coexistence,
    OutcomeClass::LimitCycle,
    OutcomeClass::FounderControl,
    OutcomeClass::Extinct,
    OutcomeClass::Unbounded,
    OutcomeClass::Unresolved,
];

/// The fill of an outcome class: Okabe & Ito (2008) colours, with two
/// greys for "both extinct" and "undecided".
pub fn class_colour(class: OutcomeClass) -> RGBColor {
    match class {
        OutcomeClass::OnlySpecies1 => OKABE_ITO.sky_blue,
        OutcomeClass::OnlySpecies2 => OKABE_ITO.orange,
        OutcomeClass::Coexistence => OKABE_ITO.bluish_green,
        OutcomeClass::LimitCycle => OKABE_ITO.reddish_purple,
        OutcomeClass::FounderControl => OKABE_ITO.yellow,
        OutcomeClass::Extinct => RGBColor(150, 150, 150),
        OutcomeClass::Unbounded => OKABE_ITO.vermillion,
        OutcomeClass::Unresolved => RGBColor(222, 222, 222),
    }
}

/// An outcome class in plain words, with the species' names (state
/// order); for one-species models the words fit one population.
pub fn class_label(class: OutcomeClass, species: &[String]) -> String {
    let name = |i: usize| {
        species
            .get(i)
            .cloned()
            .unwrap_or_else(|| format!("species {}", i + 1))
    };
    let one = species.len() == 1;
    match class {
        OutcomeClass::OnlySpecies1 if one => format!("{} persists", name(0)),
        OutcomeClass::OnlySpecies1 => format!("only {}", name(0)),
        OutcomeClass::OnlySpecies2 => format!("only {}", name(1)),
        OutcomeClass::Coexistence => "stable coexistence".to_string(),
        OutcomeClass::LimitCycle => "cycles".to_string(),
        OutcomeClass::FounderControl if one => "depends on the starting size".to_string(),
        OutcomeClass::FounderControl => "founder control (who starts ahead wins)".to_string(),
        OutcomeClass::Extinct if one => format!("{} dies out", name(0)),
        OutcomeClass::Extinct => "both extinct".to_string(),
        OutcomeClass::Unbounded => "unbounded growth".to_string(),
        OutcomeClass::Unresolved => "undecided".to_string(),
    }
}

/// The classes present in a map's computed cells, in legend order.
pub fn legend_classes(map: &OutcomeMap) -> Vec<OutcomeClass> {
    let mut present = [false; CLASS_ORDER.len()];
    for cell in map.rows.iter().flat_map(|r| &r.cells) {
        if let Some(k) = CLASS_ORDER.iter().position(|&c| c == cell.class) {
            present[k] = true;
        }
    }
    CLASS_ORDER
        .iter()
        .zip(present)
        .filter(|(_, p)| *p)
        .map(|(c, _)| *c)
        .collect()
}

/// Cell edges along an axis, as drawn: half way between neighbouring
/// values, and half a step beyond the ends.
fn cell_edges(axis: &AxisValues) -> Vec<f64> {
    let v: Vec<f64> = axis
        .values
        .iter()
        .map(|&v| drawn(axis.spacing, v))
        .collect();
    match v.len() {
        0 => Vec::new(),
        1 => {
            let half = match axis.spacing {
                Spacing::Log => 0.5,
                Spacing::Linear if v[0] != 0.0 => 0.1 * v[0].abs(),
                Spacing::Linear => 0.5,
            };
            vec![v[0] - half, v[0] + half]
        }
        n => {
            let mut edges = Vec::with_capacity(n + 1);
            edges.push(v[0] - 0.5 * (v[1] - v[0]));
            edges.extend(v.windows(2).map(|w| 0.5 * (w[0] + w[1])));
            edges.push(v[n - 1] + 0.5 * (v[n - 1] - v[n - 2]));
            edges
        }
    }
}

/// Thin diagonal lines over a pixel rectangle: rows not computed.
fn hatch<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    (x0, y0): (i32, i32),
    (x1, y1): (i32, i32),
    scale: f64,
) -> Result<(), String> {
    let (x0, x1) = (x0.min(x1), x0.max(x1));
    let (y0, y1) = (y0.min(y1), y0.max(y1));
    let style = RGBColor(175, 175, 175).stroke_width(px(scale, 1.0));
    let step = px(scale, 7.0) as i32;
    // Lines x + y = c, clipped to the rectangle.
    let mut c = x0 + y0 + step;
    while c < x1 + y1 {
        let xa = x0.max(c - y1);
        let xb = x1.min(c - y0);
        if xa < xb {
            root.draw(&PathElement::new(vec![(xa, c - xa), (xb, c - xb)], style))
                .map_err(err)?;
        }
        c += step;
    }
    Ok(())
}

/// An outcome map: each computed cell a rectangle in its class's colour
/// ([`class_colour`]), centred on its parameter values (log10 axes where
/// the map's spacing is log); rows not computed (a partial map or a shard)
/// hatched; the model's boundary curves as thin black lines with their
/// labels. The legend is left to the page ([`legend_classes`],
/// [`class_label`]).
pub fn draw_outcome_map<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    map: &OutcomeMap,
    x_label: &str,
    y_label: &str,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let (sx, sy) = (map.x.spacing, map.y.spacing);
    let (ex, ey) = (cell_edges(&map.x), cell_edges(&map.y));
    let x_range = padded(extent(ex.iter().copied()), 0.0);
    let y_range = padded(extent(ey.iter().copied()), 0.0);
    let (x_label, y_label) = (axis_label(x_label, sx), axis_label(y_label, sy));
    let mut chart = axes(
        root,
        scale,
        AxisDesc::new(x_range, &x_label, sx == Spacing::Log),
        AxisDesc::new(y_range, &y_label, sy == Spacing::Log),
    )?;
    let plot = plot_map(&chart, sx == Spacing::Log, sy == Spacing::Log);

    let finite = |a: f64, b: f64| a.is_finite() && b.is_finite();
    let mut computed = vec![false; map.y.values.len()];
    let mut cells = Vec::new();
    for row in &map.rows {
        let r = row.index;
        let (Some(&y0), Some(&y1)) = (ey.get(r), ey.get(r + 1)) else {
            continue;
        };
        if !row.cells.is_empty() {
            computed[r] = true;
        }
        for (j, cell) in row.cells.iter().enumerate() {
            let (Some(&x0), Some(&x1)) = (ex.get(j), ex.get(j + 1)) else {
                break;
            };
            if finite(x0, x1) && finite(y0, y1) {
                cells.push(Rectangle::new(
                    [(x0, y0), (x1, y1)],
                    class_colour(cell.class).filled(),
                ));
            }
        }
    }
    chart.draw_series(cells).map_err(err)?;

    // Rows not computed, hatched in bands.
    let mut r = 0;
    while r < computed.len() {
        if computed[r] {
            r += 1;
            continue;
        }
        let start = r;
        while r < computed.len() && !computed[r] {
            r += 1;
        }
        let (Some(&y0), Some(&y1)) = (ey.get(start), ey.get(r)) else {
            continue;
        };
        if finite(y0, y1) {
            let a = plot.pixel_of((plot.x.0, y0));
            let b = plot.pixel_of((plot.x.1, y1));
            hatch(
                root,
                (a.0 as i32, a.1 as i32),
                (b.0 as i32, b.1 as i32),
                scale,
            )?;
        }
    }

    draw_boundaries(root, &mut chart, &plot, map, scale)?;
    if map.rows.iter().all(|r| r.cells.is_empty()) {
        note(root, &plot, 0, "no rows computed yet", scale)?;
    }
    Ok(plot)
}

/// The boundary curves, thin and black, each labelled once beside the
/// middle of its longest piece.
fn draw_boundaries<'a, DB: DrawingBackend + 'a>(
    root: &DrawingArea<DB, Shift>,
    chart: &mut crate::Chart<'a, DB>,
    plot: &PlotMap,
    map: &OutcomeMap,
    scale: f64,
) -> Result<(), String> {
    let (sx, sy) = (map.x.spacing, map.y.spacing);
    let style = BOUNDARY.stroke_width(px(scale, 1.0));
    for boundary in &map.boundaries {
        let lines: Vec<Vec<(f64, f64)>> = boundary
            .polylines
            .iter()
            .map(|l| {
                l.iter()
                    .map(|&(x, y)| (drawn(sx, x), drawn(sy, y)))
                    .collect()
            })
            .collect();
        for l in &lines {
            draw_line(chart, l.iter().copied(), style, Dash::Solid, scale)?;
        }
        let Some(longest) = lines.iter().max_by_key(|l| l.len()) else {
            continue;
        };
        let Some(&middle) = longest.get(longest.len() / 2) else {
            continue;
        };
        if plot.holds(middle) {
            let (x, y) = plot.pixel_of(middle);
            let at = (
                x as i32 + px(scale, 4.0) as i32,
                y as i32 - px(scale, 3.0) as i32,
            );
            label_in_plot(root, plot, &boundary.label, at, scale, BOUNDARY)?;
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    //! The greenhouse mites (Rosenzweig–MacArthur, type II response) swept
    //! over the prey's carrying capacity K. Published values the figures
    //! must place: the predator can invade the prey alone once
    //! K > N* = m/(a(e − m h)), and the interior equilibrium loses its
    //! stability in a Hopf bifurcation at K_H = (e + m h)/(a h (e − m h))
    //! (Rosenzweig 1971, Science 171:385; Kot 2001, Elements of
    //! Mathematical Ecology, ch. 9). With r = 0.25, a = 0.08, h = 0.1,
    //! e = 0.3, m = 0.1: N* = 4.310…, K_H = 133.62….

    use super::*;
    use crate::testing::{draw, hex, problem, Drawn, GREENHOUSE_MITES};
    use tussock_core::analysis::{Equilibrium, LongRun, Stability};
    use tussock_core::solve::StopReason;
    use tussock_core::sweep::line::{
        sweep_line, Bifurcation, BranchEquilibrium, LinePoint, LineRequest,
    };
    use tussock_core::sweep::map::{sweep_map, MapCell, MapRequest, MapRow, Rule};
    use tussock_core::sweep::{AxisSpec, SweepOptions};

    const A: f64 = 0.08;
    const H: f64 = 0.1;
    const E: f64 = 0.3;
    const M: f64 = 0.1;

    fn n_star(m: f64) -> f64 {
        m / (A * (E - m * H))
    }

    fn k_hopf(m: f64) -> f64 {
        (E + m * H) / (A * H * (E - m * H))
    }

    fn axis(param: &str, from: f64, to: f64, steps: usize, spacing: Spacing) -> AxisSpec {
        AxisSpec {
            param: param.to_string(),
            from,
            to,
            steps,
            spacing,
        }
    }

    fn options() -> SweepOptions {
        SweepOptions {
            samples: 400,
            ..SweepOptions::default()
        }
    }

    fn line(from: f64, to: f64, steps: usize) -> LineSweep {
        let request = LineRequest {
            axis: axis("K", from, to, steps, Spacing::Log),
            options: options(),
        };
        sweep_line(&problem(GREENHOUSE_MITES), &request, &mut |_, _| true).unwrap()
    }

    fn names() -> Vec<String> {
        vec!["spider mite".to_string(), "predatory mite".to_string()]
    }

    fn bifurcation(sweep: &LineSweep, species: usize) -> Drawn {
        draw(|root| draw_bifurcation(root, sweep, species, &names(), "carrying capacity K", 1.0))
    }

    /// The one place the map tests draw: a figure and its cell rectangles
    /// per class colour.
    fn check_map(map: &OutcomeMap, name: &str) -> Drawn {
        let drawn = draw(|root| draw_outcome_map(root, map, "K", "m", 1.0));
        drawn.keep(name);
        let fills = drawn.rect_fills();
        for class in CLASS_ORDER {
            let cells = map
                .rows
                .iter()
                .flat_map(|r| &r.cells)
                .filter(|c| c.class == class)
                .count();
            let rects = fills.get(&hex(class_colour(class))).copied().unwrap_or(0);
            assert_eq!(rects, cells, "{class:?}: one rectangle per cell");
        }
        drawn
    }

    /// Pixel length of a polyline.
    fn length(line: &[(f64, f64)]) -> f64 {
        line.windows(2)
            .map(|w| ((w[1].0 - w[0].0).powi(2) + (w[1].1 - w[0].1).powi(2)).sqrt())
            .sum()
    }

    #[test]
    fn bifurcation_diagram_places_the_published_thresholds() {
        let sweep = line(1.5, 400.0, 24);
        let drawn = bifurcation(&sweep, 0);
        drawn.keep("bifurcation-prey");
        assert!(drawn.map.log_x, "a log sweep gets a log axis");
        for label in ["Hopf", "transcritical", "stable equilibrium"] {
            assert!(drawn.has_text(label), "{label} missing");
        }
        // Diamonds at the bifurcations: (N*, N*) where the predator
        // invades, (K_H, N*) at the Hopf point (prey density at the
        // interior equilibrium is N* whatever K).
        let diamonds: Vec<(f64, f64)> = drawn
            .polygons(&hex(INK))
            .iter()
            .filter(|(p, _)| p.len() == 4)
            .map(|(p, _)| {
                let n = p.len() as f64;
                let centre = p
                    .iter()
                    .fold((0.0, 0.0), |a, q| (a.0 + q.0 / n, a.1 + q.1 / n));
                drawn.data_at(centre)
            })
            .collect();
        for (k, n) in [(n_star(M), n_star(M)), (k_hopf(M), n_star(M))] {
            assert!(
                diamonds
                    .iter()
                    .any(|d| (d.0 / k - 1.0).abs() < 0.02 && (d.1 - n).abs() < 0.02 * 150.0),
                "no diamond near ({k}, {n}): {diamonds:?}"
            );
        }
        // Branch lines: solid pieces are long, dashes short. Stable
        // (solid) pieces never reach past K_H, and the interior branch's
        // solid piece ends at it: split at the located bifurcation, not at
        // a grid value.
        let lines = drawn.polylines(&hex(INK), 2);
        let solid: Vec<&Vec<(f64, f64)>> = lines.iter().filter(|l| length(l) > 7.0).collect();
        let dashes = lines.len() - solid.len();
        assert!(
            solid.len() >= 2 && dashes > 10,
            "{} solid, {dashes} dashes",
            solid.len()
        );
        let right_end = solid
            .iter()
            .flat_map(|l| l.iter())
            .map(|&p| drawn.data_at(p).0)
            .fold(0.0, f64::max);
        assert!(
            (right_end / k_hopf(M) - 1.0).abs() < 0.01,
            "stable pieces end at {right_end}, K_H = {}",
            k_hopf(M)
        );
        // Beyond K_H the long run cycles: two dots per value where the
        // simulation saw a cycle (min and max), on either side of the
        // unstable equilibrium the cycle surrounds (Poincaré–Bendixson).
        let dots: Vec<(f64, f64)> = drawn
            .circles(&hex(SPECIES_COLOURS[0]))
            .into_iter()
            .filter(|c| c.2 < 4.0)
            .map(|c| drawn.data_at((c.0, c.1)))
            .collect();
        let beyond: Vec<&LinePoint> = sweep
            .points
            .iter()
            .filter(|p| p.value > 1.2 * k_hopf(M))
            .filter(|p| {
                p.long_run
                    .as_ref()
                    .is_some_and(|r| r.kind == LongRunKind::Cycle)
            })
            .collect();
        assert!(beyond.len() >= 2, "cycles beyond K_H");
        for p in beyond {
            let at: Vec<f64> = dots
                .iter()
                .filter(|d| (d.0 / p.value - 1.0).abs() < 0.02)
                .map(|d| d.1)
                .collect();
            assert_eq!(at.len(), 2, "K = {}: {at:?}", p.value);
            let (lo, hi) = (at[0].min(at[1]), at[0].max(at[1]));
            assert!(
                lo < n_star(M) && hi > n_star(M),
                "K = {}: {lo} to {hi}",
                p.value
            );
        }
    }

    #[test]
    fn predator_branches_draw_and_a_single_point_sweep_too() {
        let sweep = line(1.5, 400.0, 12);
        let drawn = bifurcation(&sweep, 1);
        drawn.keep("bifurcation-predator");
        assert!(drawn.has_text("predatory mite (individuals)"));
        let single = line(50.0, 50.0, 1);
        let drawn = bifurcation(&single, 0);
        // One value: each equilibrium a lone mark, the long run one dot.
        let dots = drawn.circles(&hex(SPECIES_COLOURS[0]));
        assert_eq!(dots.iter().filter(|c| c.2 < 4.0).count(), 1, "{dots:?}");
        let empty = LineSweep {
            points: Vec::new(),
            bifurcations: Vec::new(),
            partial: true,
            failed: Vec::new(),
            ..single
        };
        assert!(bifurcation(&empty, 0).has_text("no values computed yet"));
    }

    #[test]
    fn non_finite_values_do_not_break_the_diagram() {
        let equilibrium = |state: Vec<f64>, stability| BranchEquilibrium {
            equilibrium: Equilibrium {
                state,
                eigenvalues: vec![(f64::NAN, 0.0), (-1.0, 0.0)],
                stability,
                feasible: true,
            },
            branch: 0,
        };
        let run = |min: Vec<f64>, max: Vec<f64>| LongRun {
            kind: LongRunKind::Cycle,
            period: None,
            min,
            max,
            extinct: vec![false, false],
            window: (0.0, 1.0),
            stop: StopReason::Finished,
        };
        let points = vec![
            LinePoint {
                index: 0,
                value: 1.0,
                equilibria: vec![equilibrium(vec![f64::NAN, 1.0], Stability::StableNode)],
                long_run: Some(run(vec![f64::NAN, 0.0], vec![f64::INFINITY, 1.0])),
                failure: None,
            },
            LinePoint {
                index: 1,
                value: f64::INFINITY,
                equilibria: vec![equilibrium(vec![2.0, 1.0], Stability::Saddle)],
                long_run: None,
                failure: Some("refused".to_string()),
            },
            LinePoint {
                index: 2,
                value: -3.0,
                equilibria: vec![equilibrium(
                    vec![1e300, f64::NEG_INFINITY],
                    Stability::Center,
                )],
                long_run: Some(run(vec![], vec![])),
                failure: None,
            },
        ];
        let sweep = LineSweep {
            axis: AxisValues {
                param: "K".to_string(),
                spacing: Spacing::Log,
                values: vec![1.0, f64::INFINITY, -3.0],
            },
            points,
            bifurcations: vec![Bifurcation {
                kind: BifurcationKind::Hopf,
                value: f64::NAN,
                branch: 0,
                partner: None,
                state: vec![],
                precision: 0.0,
                between: (0, 1),
            }],
            partial: false,
            failed: vec![1],
        };
        for species in [0, 1, 7] {
            let drawn = bifurcation(&sweep, species);
            assert!(drawn.has_text("1 values failed"));
        }
    }

    #[test]
    fn branch_pieces_split_where_stability_changes() {
        let at = |index: usize, density: f64, stable: bool, feasible: bool| OnBranch {
            index,
            value: index as f64,
            density,
            stable,
            feasible,
        };
        let entries = [
            at(0, 0.0, true, true),
            at(1, 1.0, true, true),
            at(2, 2.0, false, true),
            at(3, 3.0, false, true),
            at(4, -1.0, false, false),
            at(6, 5.0, true, true),
            at(7, 6.0, true, true),
        ];
        let none = |_: &OnBranch, _: &OnBranch| None;
        let pieces = branch_pieces(&entries, &none);
        let expected = vec![
            Piece {
                stable: true,
                points: vec![(0.0, 0.0), (1.0, 1.0), (1.5, 1.5)],
            },
            Piece {
                stable: false,
                points: vec![(1.5, 1.5), (2.0, 2.0), (3.0, 3.0)],
            },
            Piece {
                stable: true,
                points: vec![(6.0, 5.0), (7.0, 6.0)],
            },
        ];
        assert_eq!(pieces, expected);
        // A located bifurcation moves the split there.
        let located = |_: &OnBranch, _: &OnBranch| Some((1.25, 1.1));
        let pieces = branch_pieces(&entries[..3], &located);
        assert_eq!(pieces[0].points.last(), Some(&(1.25, 1.1)));
        assert_eq!(pieces[1].points.first(), Some(&(1.25, 1.1)));
    }

    fn small_map() -> OutcomeMap {
        let request = MapRequest {
            x: axis("K", 2.0, 400.0, 14, Spacing::Log),
            y: axis("m", 0.05, 0.4, 9, Spacing::Linear),
            options: options(),
            shard: None,
        };
        sweep_map(&problem(GREENHOUSE_MITES), &request, &mut |_, _| true).unwrap()
    }

    #[test]
    fn outcome_map_has_one_rectangle_per_cell_where_its_values_are() {
        let map = small_map();
        assert!(!map.partial);
        let drawn = check_map(&map, "outcome-map");
        assert!(drawn.map.log_x && !drawn.map.log_y);
        // Each rectangle's centre maps back to its cell's values (the map
        // is computed by the core; the drawing must put each where it is).
        for row in &map.rows {
            for cell in &row.cells {
                let rects = drawn.rects(&hex(class_colour(cell.class)));
                let found = rects.iter().any(|r| {
                    let (x, y) = drawn.data_at((r[0] + r[2] / 2.0, r[1] + r[3] / 2.0));
                    (x / cell.x - 1.0).abs() < 0.1 && (y - cell.y).abs() < 0.01
                });
                assert!(found, "no rectangle at ({}, {})", cell.x, cell.y);
            }
        }
        // Above K_H the cells cycle, below N* only the prey persists
        // (Rosenzweig 1971); the theory's words name the species.
        let classes = legend_classes(&map);
        for class in [
            OutcomeClass::OnlySpecies1,
            OutcomeClass::Coexistence,
            OutcomeClass::LimitCycle,
        ] {
            assert!(classes.contains(&class), "{class:?} not in {classes:?}");
        }
        assert_eq!(
            class_label(OutcomeClass::OnlySpecies1, &names()),
            "only spider mite"
        );
        // The Hopf boundary: thin black polylines on K = K_H(m).
        let boundary = drawn.polylines(&hex(BOUNDARY), 1);
        assert!(!boundary.is_empty());
        let mut checked = 0;
        for p in boundary.iter().flatten() {
            let (k, m) = drawn.data_at(*p);
            let on_hopf = (k / k_hopf(m) - 1.0).abs() < 0.03;
            let on_invasion = (k / n_star(m) - 1.0).abs() < 0.03;
            assert!(on_hopf || on_invasion, "({k}, {m}) is on neither curve");
            checked += 1;
        }
        assert!(checked > 10);
        assert!(drawn.has_text("(Hopf)"));
    }

    #[test]
    fn a_partial_map_leaves_missing_rows_hatched() {
        let mut map = small_map();
        map.rows.retain(|r| !(3..6).contains(&r.index));
        map.partial = true;
        let drawn = check_map(&map, "outcome-map-partial");
        let hatching = drawn.polylines("#AFAFAF", 1);
        assert!(hatching.len() > 5, "{} hatch lines", hatching.len());
        // Inside the band of rows 3 to 5 (m between their cell edges).
        let edges = cell_edges(&map.y);
        for p in hatching.iter().flatten() {
            let (_, m) = drawn.data_at(*p);
            assert!(
                m >= edges[3] - 1e-3 && m <= edges[6] + 1e-3,
                "hatch at m = {m}"
            );
        }
        // No rows at all, and a row with no cells.
        let mut empty = map.clone();
        empty.rows.clear();
        assert!(check_map(&empty, "outcome-map-empty").has_text("no rows computed yet"));
        let mut odd = map;
        odd.rows.push(MapRow {
            index: 99,
            y: f64::NAN,
            cells: Vec::new(),
        });
        check_map(&odd, "outcome-map-odd");
    }

    #[test]
    fn a_full_size_map_draws_every_cell_and_odd_axes_do_not_break_it() {
        let n = 300;
        let values: Vec<f64> = (0..n).map(|i| 10f64.powf(i as f64 / 100.0)).collect();
        let cell = |x: f64, y: f64, k: usize| MapCell {
            x,
            y,
            class: CLASS_ORDER[k % CLASS_ORDER.len()],
            rule: Rule::Simulation,
            attractors: Vec::new(),
            cycle: None,
            reason: None,
        };
        let rows: Vec<MapRow> = values
            .iter()
            .enumerate()
            .map(|(r, &y)| MapRow {
                index: r,
                y,
                cells: values
                    .iter()
                    .enumerate()
                    .map(|(j, &x)| cell(x, y, (r / 30 + j / 30) % 8))
                    .collect(),
            })
            .collect();
        let axis = |param: &str| AxisValues {
            param: param.to_string(),
            spacing: Spacing::Log,
            values: values.clone(),
        };
        let map = OutcomeMap {
            x: axis("K"),
            y: axis("a"),
            rows,
            boundaries: Vec::new(),
            partial: false,
            shard: None,
        };
        let drawn = check_map(&map, "outcome-map-300");
        let fills = drawn.rect_fills();
        let total: usize = CLASS_ORDER
            .iter()
            .filter_map(|&c| fills.get(&hex(class_colour(c))))
            .sum();
        assert_eq!(total, n * n);
        // A one-value axis and non-finite or non-positive values on a log
        // axis: drawn without them, no panic.
        let odd = OutcomeMap {
            x: AxisValues {
                param: "K".to_string(),
                spacing: Spacing::Log,
                values: vec![-1.0, f64::NAN, 10.0],
            },
            y: AxisValues {
                param: "m".to_string(),
                spacing: Spacing::Linear,
                values: vec![0.2],
            },
            rows: vec![MapRow {
                index: 0,
                y: 0.2,
                cells: vec![
                    cell(-1.0, 0.2, 0),
                    cell(f64::NAN, 0.2, 1),
                    cell(10.0, 0.2, 2),
                ],
            }],
            boundaries: vec![tussock_core::sweep::map::BoundaryLine {
                key: "k".to_string(),
                label: "a line".to_string(),
                polylines: vec![vec![(f64::NAN, 0.1), (1.0, f64::INFINITY)], vec![]],
            }],
            partial: false,
            shard: None,
        };
        draw(|root| draw_outcome_map(root, &odd, "K", "m", 1.0));
        draw(|root| draw_outcome_map(root, &odd, "K", "m", f64::NAN));
    }

    #[test]
    fn class_colours_are_okabe_ito_and_distinct() {
        // Okabe & Ito (2008), Color Universal Design: orange E69F00, sky
        // blue 56B4E9, bluish green 009E73, yellow F0E442, vermillion
        // D55E00, reddish purple CC79A7 (hex values from memory).
        let expected = [
            (OutcomeClass::OnlySpecies1, "#56B4E9"),
            (OutcomeClass::OnlySpecies2, "#E69F00"),
            (OutcomeClass::Coexistence, "#009E73"),
            (OutcomeClass::LimitCycle, "#CC79A7"),
            (OutcomeClass::FounderControl, "#F0E442"),
            (OutcomeClass::Unbounded, "#D55E00"),
        ];
        for (class, colour) in expected {
            assert_eq!(hex(class_colour(class)), colour, "{class:?}");
        }
        let mut all: Vec<String> = CLASS_ORDER.iter().map(|&c| hex(class_colour(c))).collect();
        all.push("#FFFFFF".to_string());
        all.sort();
        all.dedup();
        assert_eq!(all.len(), CLASS_ORDER.len() + 1, "distinct and not white");
        let one = vec!["duckweed".to_string()];
        assert_eq!(
            class_label(OutcomeClass::OnlySpecies1, &one),
            "duckweed persists"
        );
        assert_eq!(
            class_label(OutcomeClass::OnlySpecies2, &[]),
            "only species 2"
        );
    }
}
