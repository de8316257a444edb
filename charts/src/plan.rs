//! The release planner's figures: the response curves (how far from the
//! goal each release size lands) and the smallest release against its
//! timing.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use tussock_core::plan::{Plan, SizeUnit};

use crate::{
    axes_framed, draw_line, draw_marks, err, extent, font_size, legend, legend_entry, note, padded,
    plot_map, px, releases, series_look, short, side_legend, side_notes, text_at, time_point,
    AxisDesc, Dash, DrawResult, Frame, LegendSample, Mark, Marker, INK,
};

/// Width of the response curves' side panel (legend and notes), CSS
/// pixels.
const SIDE_PANEL: f64 = 215.0;

/// What a release size is, for an axis label.
fn size_words(plan: &Plan, species: &[String], released: usize) -> String {
    let name = |i: usize| {
        species
            .get(i)
            .cloned()
            .unwrap_or_else(|| format!("species {}", i + 1))
    };
    match plan.unit {
        SizeUnit::Individuals => format!("{} per release", name(released)),
        SizeUnit::RatioToOther => format!(
            "{} per {} at release",
            name(released),
            name(1 - released.min(1))
        ),
    }
}

/// A row's name in a legend: "day 7, 2 releases".
fn row_name(time_unit: &str, time: f64, count: u32) -> String {
    format!("{}, {}", time_point(time_unit, time), releases(count))
}

/// The goal's margin against the size of each release, one line per row
/// of the plan (first release time × number of releases), on a log10 size
/// axis. The goal is met above the line at zero; each row's smallest
/// size meeting it is a filled marker on that line. Sizes of zero (no
/// release) are left off the axis and their margin given in a note; runs
/// that failed (margin −∞) are crosses on the bottom edge; other
/// non-finite margins break the line.
///
/// `species` names the model's species, `released` is the index of the
/// released one (for the axis label), `time_unit` the scenario's.
pub fn draw_response_curves<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    plan: &Plan,
    species: &[String],
    released: usize,
    time_unit: &str,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let positive = |s: f64| s.is_finite() && s > 0.0;
    let sizes = plan
        .rows
        .iter()
        .flat_map(|r| r.curve.iter().map(|e| e.size).chain(r.smallest))
        .filter(|&s| positive(s))
        .map(f64::log10);
    let x_range = padded(extent(sizes), 0.03);
    let margins = plan
        .rows
        .iter()
        .flat_map(|r| r.curve.iter().filter(|e| positive(e.size)))
        .map(|e| e.margin)
        .chain([0.0]);
    let y_range = padded(extent(margins), 0.06);
    let x_label = format!("{} (log scale)", size_words(plan, species, released));
    // Legend and notes in a panel on the right: a plan has many rows.
    let frame = Frame {
        right: SIDE_PANEL,
        ..Frame::default()
    };
    let mut chart = axes_framed(
        root,
        scale,
        AxisDesc::log(x_range, &x_label),
        AxisDesc::linear(y_range, "goal margin"),
        frame,
    )?;
    let map = plot_map(&chart, true, false);

    // The goal line.
    draw_line(
        &mut chart,
        [(map.x.0, 0.0), (map.x.1, 0.0)],
        INK.stroke_width(px(scale, 1.5)),
        Dash::Solid,
        scale,
    )?;
    let (right, zero) = map.pixel_of((map.x.1, 0.0));
    text_at(
        root,
        "goal met above",
        (
            right as i32 - px(scale, 4.0) as i32,
            zero as i32 - px(scale, 3.0) as i32,
        ),
        (HPos::Right, VPos::Bottom),
        font_size(scale, 11.0),
        INK,
    )?;

    let mut failed_any = false;
    let mut entries = Vec::new();
    for (k, row) in plan.rows.iter().enumerate() {
        let look = series_look(k);
        let points: Vec<(f64, f64)> = row
            .curve
            .iter()
            .filter(|e| positive(e.size))
            .map(|e| {
                let m = if e.margin.is_finite() {
                    e.margin
                } else {
                    f64::NAN
                };
                (e.size.log10(), m)
            })
            .collect();
        let style = look.colour.stroke_width(px(scale, 2.0));
        draw_line(&mut chart, points.iter().copied(), style, look.dash, scale)?;
        // Open markers along the line, about six per curve.
        let step = (points.len() / 6).max(1);
        let along = points.iter().copied().step_by(step);
        draw_marks(
            &mut chart,
            &map,
            along,
            (look.marker, look.colour, false),
            scale,
        )?;
        // Failed runs on the bottom edge.
        let failed: Vec<(f64, f64)> = row
            .curve
            .iter()
            .filter(|e| positive(e.size) && e.margin == f64::NEG_INFINITY)
            .map(|e| (e.size.log10(), map.y.0))
            .collect();
        failed_any |= !failed.is_empty();
        draw_marks(
            &mut chart,
            &map,
            failed,
            (Marker::Cross, look.colour, true),
            scale,
        )?;
        // The answer, on the goal line.
        if let Some(s) = row.smallest.filter(|&s| positive(s)) {
            let mark = crate::Mark {
                radius: 6.0 * crate::usable_scale(scale),
                ..crate::Mark::new((s.log10(), 0.0), look.marker, look.colour, true, scale)
            };
            if map.holds(mark.at) {
                chart.draw_series([mark]).map_err(err)?;
            }
        }
        entries.push((
            row_name(time_unit, row.time, row.count),
            LegendSample::line(look.colour, px(scale, 2.0), look.dash, scale)
                .with_marker(look.marker, false),
        ));
    }

    let mut notes = Vec::new();
    if plan.rows.iter().any(|r| r.smallest.is_some()) {
        notes.push("filled: smallest size meeting the goal".to_string());
    }
    if plan.rows.iter().any(|r| r.at_lower_bound) {
        notes.push("at the left end: that size or less".to_string());
    }
    if plan.rows.iter().any(|r| r.non_monotone) {
        notes.push("some larger sizes fail again".to_string());
    }
    let unreleased = extent(
        plan.rows
            .iter()
            .filter_map(|r| r.curve.iter().find(|e| e.size == 0.0))
            .map(|e| e.margin),
    );
    match unreleased.map(|(a, b)| (short(a), short(b))) {
        Some((a, b)) if a == b => notes.push(format!("without a release: margin {a}")),
        Some((a, b)) => notes.push(format!("without a release: margin {a} to {b}")),
        None => {}
    }
    if failed_any {
        notes.push("× a run failed at that size".to_string());
    }
    if plan.partial {
        notes.push("stopped before every row was searched".to_string());
    }
    if plan.rows.is_empty() {
        note(root, &map, 0, "no release times and numbers to draw", scale)?;
    }
    side_legend(root, &map, &entries, scale)?;
    let line = font_size(scale, 11.0) * 1.4;
    let top = (map.pixels_y.1 - map.pixels_y.0) - (notes.len() as f64 * line) as i32;
    side_notes(root, &map, top, &notes, scale)?;
    Ok(map)
}

/// The smallest size per release meeting the goal against the first
/// release time, one series per number of releases, on a log10 size axis.
/// Rows with no size in range meeting the goal are open markers in a band
/// at the top, labelled "none in range".
pub fn draw_release_timing<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    plan: &Plan,
    species: &[String],
    released: usize,
    time_unit: &str,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let positive = |s: f64| s.is_finite() && s > 0.0;
    let answers = plan
        .rows
        .iter()
        .flat_map(|r| r.smallest.into_iter().chain(r.curve.last().map(|e| e.size)))
        .filter(|&s| positive(s))
        .map(f64::log10);
    let found = padded(extent(answers), 0.06);
    let x_range = padded(extent(plan.rows.iter().map(|r| r.time)), 0.05);
    let x_label = format!("first release ({time_unit})");
    let y_label = format!(
        "smallest {} (log scale)",
        size_words(plan, species, released)
    );
    // Rows without an answer go in a strip above the plotting area.
    let strip = 26.0;
    let frame = Frame {
        top: 10.0 + strip,
        ..Frame::default()
    };
    let mut chart = axes_framed(
        root,
        scale,
        AxisDesc::linear(x_range, &x_label),
        AxisDesc::log(found, &y_label),
        frame,
    )?;
    let map = plot_map(&chart, false, true);
    let none_y = map.pixels_y.0 - (px(scale, strip / 2.0) as i32);

    let mut counts: Vec<u32> = plan.rows.iter().map(|r| r.count).collect();
    counts.sort_unstable();
    counts.dedup();
    let mut any_none = false;
    for (k, &count) in counts.iter().enumerate() {
        let look = series_look(k);
        let mut rows: Vec<_> = plan.rows.iter().filter(|r| r.count == count).collect();
        rows.sort_by(|a, b| a.time.total_cmp(&b.time));
        let line: Vec<(f64, f64)> = rows
            .iter()
            .map(|r| match r.smallest.filter(|&s| positive(s)) {
                Some(s) => (r.time, s.log10()),
                None => (r.time, f64::NAN),
            })
            .collect();
        let style = look.colour.stroke_width(px(scale, 2.0));
        draw_line(&mut chart, line.iter().copied(), style, look.dash, scale)?;
        let answered = line.iter().copied().filter(|p| p.1.is_finite());
        draw_marks(
            &mut chart,
            &map,
            answered,
            (look.marker, look.colour, true),
            scale,
        )?;
        // "This much or less": the smallest size searched already met it.
        for r in rows.iter().filter(|r| r.at_lower_bound) {
            let Some(s) = r.smallest.filter(|&s| positive(s)) else {
                continue;
            };
            if map.holds((r.time, s.log10())) {
                let (x, y) = map.pixel_of((r.time, s.log10()));
                let at = (x as i32 - px(scale, 7.0) as i32, y as i32);
                let size = font_size(scale, 12.0);
                text_at(
                    root,
                    "≤",
                    at,
                    (HPos::Right, VPos::Center),
                    size,
                    look.colour,
                )?;
            }
        }
        for p in line.iter().filter(|p| !p.1.is_finite() && p.0.is_finite()) {
            any_none = true;
            let (x, _) = map.pixel_of((p.0, map.y.0));
            let at = (x.round() as i32, none_y);
            let mark = Mark::new(at, look.marker, look.colour, false, scale);
            root.draw(&mark).map_err(err)?;
        }
        legend_entry(
            &mut chart,
            releases(count),
            LegendSample::series(look, scale),
        )?;
    }
    if any_none {
        text_at(
            root,
            "none in range:",
            (map.pixels_x.0 - px(scale, 4.0) as i32, none_y),
            (HPos::Right, VPos::Center),
            font_size(scale, 11.0),
            INK,
        )?;
    }
    if plan.rows.is_empty() {
        note(root, &map, 0, "no release times and numbers to draw", scale)?;
    } else {
        legend(&mut chart, scale, SeriesLabelPosition::LowerRight)?;
    }
    Ok(map)
}

#[cfg(test)]
mod tests {
    //! The greenhouse plan: predatory mites released against spider mites
    //! (Rosenzweig–MacArthur), goal: the pest under its economic threshold
    //! of 10 from day 20 to day 60. Without a release the pest grows
    //! logistically, N(t) = K / (1 + (K/N₀ − 1) e^(−rt)) (Verhulst 1838),
    //! so the margin with no release is 10 − N(60) with N₀ = 2, K = 150,
    //! r = 0.25.

    use super::*;
    use crate::testing::{draw, hex, problem, Drawn, GREENHOUSE_PLAN};
    use tussock_core::plan::{plan, Evaluation, Goal, PlanRequest, PlanRow};

    fn names() -> Vec<String> {
        vec!["spider mite".to_string(), "predatory mite".to_string()]
    }

    fn greenhouse_plan() -> Plan {
        let request = PlanRequest {
            goal: Goal::PestBelowThreshold {
                by: 20.0,
                until: 60.0,
            },
            species: 1,
            unit: SizeUnit::Individuals,
            max_size: 50.0,
            times: vec![0.0, 7.0, 14.0, 21.0],
            counts: vec![1, 3],
            every: 7.0,
            curve_points: 12,
        };
        plan(&problem(GREENHOUSE_PLAN), &request).expect("a valid plan")
    }

    /// The one place the tests draw: both figures of a plan.
    fn check(plan: &Plan, name: &str) -> (Drawn, Drawn) {
        let curves = draw(|root| draw_response_curves(root, plan, &names(), 1, "days", 1.0));
        curves.keep(&format!("{name}-curves"));
        let timing = draw(|root| draw_release_timing(root, plan, &names(), 1, "days", 1.0));
        timing.keep(&format!("{name}-timing"));
        (curves, timing)
    }

    fn close(a: (f64, f64), b: (f64, f64), tolerance: (f64, f64)) -> bool {
        (a.0 - b.0).abs() <= tolerance.0 && (a.1 - b.1).abs() <= tolerance.1
    }

    #[test]
    fn response_curves_mark_each_answer_on_the_goal_line() {
        let plan = greenhouse_plan();
        let (curves, _) = check(&plan, "plan");
        assert!(curves.map.log_x);
        for row in &plan.rows {
            assert!(curves.has_text(&row_name("days", row.time, row.count)));
        }
        assert!(curves.has_text("day 7, 3 releases") && curves.has_text("goal met above"));
        assert!(curves.has_text("at the left end: that size or less"));
        // Rows 0 and 5 are drawn with circles (blue, sky blue); their
        // answers are the large filled circles on the goal line.
        for k in [0, 5] {
            let look = series_look(k);
            let smallest = plan.rows[k].smallest.expect("an answer");
            let answers: Vec<(f64, f64)> = curves
                .circles(&hex(look.colour))
                .into_iter()
                .filter(|c| c.2 >= 5.5)
                .map(|c| curves.data_at((c.0, c.1)))
                .map(|(x, y)| (x.log10(), y))
                .collect();
            assert!(
                answers
                    .iter()
                    .any(|&a| close(a, (smallest.log10(), 0.0), (0.01, 0.5))),
                "row {k}: {answers:?}, smallest {smallest}"
            );
        }
        // No release: logistic growth to day 60 (Verhulst 1838).
        let (k, n0, r) = (150.0, 2.0, 0.25);
        let n60 = k / (1.0 + (k / n0 - 1.0) * f64::exp(-r * 60.0));
        let words = format!("without a release: margin {}", crate::short(10.0 - n60));
        assert!(curves.has_text(&words), "{words}: {:?}", curves.texts());
    }

    #[test]
    fn release_timing_puts_rows_without_an_answer_at_the_top() {
        let plan = greenhouse_plan();
        let (_, timing) = check(&plan, "plan");
        assert!(timing.map.log_y);
        assert!(timing.has_text("none in range") && timing.has_text("3 releases"));
        // Early releases already work at the smallest size searched.
        assert!(plan.rows.iter().any(|r| r.at_lower_bound) && timing.has_text("≤"));
        // One release, drawn with circles: filled at (time, size) where
        // there is an answer, open in the band at the top where there is
        // none.
        let filled: Vec<(f64, f64)> = timing
            .circles(&hex(series_look(0).colour))
            .into_iter()
            .filter(|c| c.2 < 4.5)
            .map(|c| timing.data_at((c.0, c.1)))
            .collect();
        // Open markers in the strip above the plotting area, at the row's
        // time.
        let open: Vec<(f64, f64)> = timing
            .circles("#FFFFFF")
            .into_iter()
            .filter(|c| c.2 < 4.5 && c.1 < f64::from(timing.map.pixels_y.0))
            .map(|c| {
                (
                    timing.data_at((c.0, f64::from(timing.map.pixels_y.1))).0,
                    c.1,
                )
            })
            .collect();
        for row in plan.rows.iter().filter(|r| r.count == 1) {
            let found = match row.smallest {
                Some(s) => filled
                    .iter()
                    .any(|&(t, y)| close((t, y.log10()), (row.time, s.log10()), (0.05, 0.01))),
                None => open.iter().any(|&(t, _)| (t - row.time).abs() < 0.05),
            };
            assert!(found, "day {}: {filled:?} {open:?}", row.time);
        }
        assert!(plan.rows.iter().any(|r| r.smallest.is_none()));
    }

    fn row(time: f64, count: u32, curve: Vec<Evaluation>, smallest: Option<f64>) -> PlanRow {
        PlanRow {
            time,
            count,
            every: 7.0,
            smallest,
            total: smallest.map(|s| s * f64::from(count)),
            non_monotone: false,
            at_lower_bound: false,
            curve,
        }
    }

    fn evaluation(size: f64, margin: f64) -> Evaluation {
        Evaluation {
            size,
            margin,
            met: margin > 0.0,
        }
    }

    #[test]
    fn failed_runs_empty_plans_and_odd_numbers_do_not_break_them() {
        let failed: Vec<Evaluation> = [0.0, 0.1, 1.0, 10.0]
            .iter()
            .map(|&s| evaluation(s, f64::NEG_INFINITY))
            .collect();
        let all_failed = Plan {
            rows: vec![row(3.0, 1, failed.clone(), None), row(3.0, 2, failed, None)],
            partial: true,
            best: None,
            unit: SizeUnit::RatioToOther,
        };
        let (curves, timing) = check(&all_failed, "plan-failed");
        assert!(curves.has_text("× a run failed at that size"));
        assert!(curves.has_text("predatory mite per spider mite at release"));
        assert!(timing.has_text("none in range"));
        // Crosses on the bottom edge, two strokes each, in the row colours.
        let crosses = curves
            .svg
            .matches(&format!(
                "stroke=\"{}\" stroke-width=\"3\"",
                hex(series_look(0).colour)
            ))
            .count();
        assert!(crosses >= 2 * 3, "{crosses} cross strokes");

        let empty = Plan {
            rows: Vec::new(),
            partial: false,
            best: None,
            unit: SizeUnit::Individuals,
        };
        let (curves, timing) = check(&empty, "plan-empty");
        assert!(curves.has_text("no release times and numbers to draw"));
        assert!(timing.has_text("no release times and numbers to draw"));

        let odd = Plan {
            rows: vec![
                row(
                    f64::NAN,
                    1,
                    vec![
                        evaluation(f64::NAN, 1.0),
                        evaluation(-1.0, 2.0),
                        evaluation(f64::INFINITY, f64::NAN),
                        evaluation(5.0, f64::INFINITY),
                    ],
                    Some(f64::NAN),
                ),
                row(2.0, 0, Vec::new(), Some(-3.0)),
                row(2.0, 4, vec![evaluation(1.0, 0.5)], Some(1.0)),
            ],
            partial: false,
            best: Some(7),
            unit: SizeUnit::Individuals,
        };
        check(&odd, "plan-odd");
        draw(|root| draw_response_curves(root, &odd, &[], 5, "", f64::INFINITY));
        draw(|root| draw_release_timing(root, &odd, &[], 0, "", 0.0));
    }
}
