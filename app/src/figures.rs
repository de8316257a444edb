//! The figures the page shows, as values: what to draw, how to describe
//! the point under the pointer, and what to call a downloaded file. Drawing
//! itself lives in `tussock-charts`, generic over the backend, so a figure
//! goes to the page's canvas, to an SVG download and to a PNG download
//! through the same code.

use std::rc::Rc;

use tussock_charts::record::Recording;
use tussock_charts::{AreaShift, DrawResult, DrawingArea, DrawingBackend, PlotMap};
use tussock_core::analysis::round_sig;
use tussock_core::data::CountData;
use tussock_core::fit::FitResult;
use tussock_core::plan::{Plan, SizeUnit};
use tussock_core::stochastic::{EnsembleSummary, EstablishmentTable};
use tussock_core::sweep::line::LineSweep;
use tussock_core::sweep::map::{MapCell, OutcomeMap};

use crate::state::Run;

/// Size of exported figures, in CSS pixels (PNG doubles it).
pub const EXPORT_SIZE: (u32, u32) = (900, 520);

/// A shared, immutable value compared by identity, so comparing two
/// figures never walks a large result.
#[derive(Debug)]
pub struct Shared<T>(pub Rc<T>);

impl<T> Clone for Shared<T> {
    fn clone(&self) -> Self {
        Shared(self.0.clone())
    }
}

impl<T> PartialEq for Shared<T> {
    fn eq(&self, other: &Self) -> bool {
        Rc::ptr_eq(&self.0, &other.0)
    }
}

impl<T> std::ops::Deref for Shared<T> {
    type Target = T;
    fn deref(&self) -> &T {
        &self.0
    }
}

impl<T> Shared<T> {
    pub fn new(value: T) -> Shared<T> {
        Shared(Rc::new(value))
    }
}

/// Names and units a figure writes on its axes and readouts.
#[derive(Clone, Debug, PartialEq)]
pub struct Labels {
    pub species: Vec<String>,
    pub time_unit: String,
}

/// One chart and the data it shows.
#[derive(Clone, Debug, PartialEq)]
pub enum Figure {
    TimeSeries {
        run: Rc<Run>,
        log_y: bool,
        observed: Option<Shared<CountData>>,
    },
    PhasePlane {
        run: Rc<Run>,
        observed: Option<Shared<CountData>>,
    },
    /// Goal margin against release size, a curve per release plan.
    ResponseCurves {
        plan: Shared<Plan>,
        labels: Labels,
        released: usize,
    },
    /// Smallest release against the first release time.
    ReleaseTiming {
        plan: Shared<Plan>,
        labels: Labels,
        released: usize,
    },
    Bifurcation {
        sweep: Shared<LineSweep>,
        labels: Labels,
        species: usize,
        param: String,
    },
    OutcomeMap {
        map: Shared<OutcomeMap>,
        labels: Labels,
    },
    Fan {
        summary: Shared<EnsembleSummary>,
        species: usize,
    },
    Extinction {
        summary: Shared<EnsembleSummary>,
    },
    Establishment {
        table: Shared<EstablishmentTable>,
    },
    Residuals {
        fit: Shared<FitResult>,
        labels: Labels,
    },
    Variants {
        runs: Shared<Vec<(String, Rc<Run>)>>,
        species: usize,
    },
}

impl Figure {
    pub fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, AreaShift>,
        scale: f64,
    ) -> DrawResult {
        use tussock_charts as c;
        match self {
            Figure::TimeSeries {
                run,
                log_y,
                observed,
            } => c::draw_time_series(root, run, observed.as_deref(), scale, *log_y),
            Figure::PhasePlane { run, observed } => {
                c::draw_phase_plane(root, run, observed.as_deref(), scale)
            }
            Figure::ResponseCurves {
                plan,
                labels,
                released,
            } => c::draw_response_curves(
                root,
                plan,
                &labels.species,
                *released,
                &labels.time_unit,
                scale,
            ),
            Figure::ReleaseTiming {
                plan,
                labels,
                released,
            } => c::draw_release_timing(
                root,
                plan,
                &labels.species,
                *released,
                &labels.time_unit,
                scale,
            ),
            Figure::Bifurcation {
                sweep,
                labels,
                species,
                param,
            } => c::draw_bifurcation(root, sweep, *species, &labels.species, param, scale),
            Figure::OutcomeMap { map, .. } => {
                c::draw_outcome_map(root, map, &map.x.param, &map.y.param, scale)
            }
            Figure::Fan { summary, species } => c::draw_fan(root, summary, *species, scale),
            Figure::Extinction { summary } => c::draw_extinction_curves(root, summary, scale),
            Figure::Establishment { table } => c::draw_establishment(root, table, scale),
            Figure::Residuals { fit, labels } => {
                c::draw_residuals(root, fit, &labels.species, &labels.time_unit, scale)
            }
            Figure::Variants { runs, species } => {
                let named: Vec<(&str, &Run)> =
                    runs.iter().map(|(n, r)| (n.as_str(), r.as_ref())).collect();
                c::draw_variants(root, &named, *species, scale)
            }
        }
    }

    /// Whether clicking the plotting area means something: a new
    /// trajectory on the phase plane, a parameter value on a sweep.
    pub fn clickable(&self) -> bool {
        matches!(
            self,
            Figure::PhasePlane { .. } | Figure::OutcomeMap { .. } | Figure::Bifurcation { .. }
        )
    }

    /// A file name without extension for downloads.
    pub fn file_stem(&self) -> String {
        let what = match self {
            Figure::TimeSeries { run, .. } => {
                return format!("{}-densities", slug(&run.problem.species.join("-")))
            }
            Figure::PhasePlane { run, .. } => {
                return format!("{}-phase-plane", slug(&run.problem.species.join("-")))
            }
            Figure::ResponseCurves { .. } => "release-response".to_string(),
            Figure::ReleaseTiming { .. } => "release-timing".to_string(),
            Figure::Bifurcation { param, .. } => format!("sweep-{param}"),
            Figure::OutcomeMap { map, .. } => {
                format!("outcome-map-{}-{}", map.x.param, map.y.param)
            }
            Figure::Fan {
                summary, species, ..
            } => format!(
                "spread-{}",
                summary.species.get(*species).map_or("", String::as_str)
            ),
            Figure::Extinction { .. } => "extinction-risk".to_string(),
            Figure::Establishment { .. } => "establishment".to_string(),
            Figure::Residuals { .. } => "fit-residuals".to_string(),
            Figure::Variants { .. } => "variants".to_string(),
        };
        slug(&what)
    }

    /// The figure's drawing on a `width` × `height` area at `scale`, ready
    /// to play onto the page's canvas or into an SVG, and where its data
    /// sit. The page draws only through recordings, so the drawing code is
    /// compiled once, not once per backend (a smaller download).
    pub fn record(
        &self,
        width: u32,
        height: u32,
        scale: f64,
    ) -> Result<(Recording, PlotMap), String> {
        Recording::make(width, height, |root| self.draw(root, scale))
    }

    /// The figure as an SVG document.
    pub fn to_svg(&self) -> Result<String, String> {
        let (w, h) = EXPORT_SIZE;
        self.record(w, h, 1.0)?.0.to_svg(w, h)
    }

    /// Readout for the point under the pointer, in data coordinates.
    pub fn describe_point(&self, x: f64, y: f64) -> String {
        match self {
            Figure::TimeSeries { run, .. } => {
                let traj = &run.trajectory;
                let p = &run.problem;
                let Some(i) = nearest(&traj.times, x) else {
                    return String::new();
                };
                let values: Vec<String> = (0..traj.n_species)
                    .map(|k| format!("{} {}", p.species[k], round_sig(traj.states[i][k], 4)))
                    .collect();
                format!(
                    "t = {} {}: {}",
                    round_sig(traj.times[i], 4),
                    p.time_unit,
                    values.join(", ")
                )
            }
            Figure::PhasePlane { run, .. } => {
                let p = &run.problem;
                format!(
                    "{} {}, {} {} — click to start a trajectory here",
                    p.species[0],
                    round_sig(x, 4),
                    p.species[1],
                    round_sig(y, 4)
                )
            }
            Figure::ResponseCurves { plan, .. } => format!(
                "release size {}{}: margin {} (goal met above 0)",
                round_sig(x, 3),
                unit_suffix(plan),
                round_sig(y, 3)
            ),
            Figure::ReleaseTiming { plan, labels, .. } => format!(
                "first release at {} {}: {}{} per release",
                round_sig(x, 3),
                labels.time_unit,
                round_sig(y, 3),
                unit_suffix(plan)
            ),
            Figure::Bifurcation {
                sweep,
                labels,
                species,
                param,
            } => {
                let values: Vec<f64> = sweep.points.iter().map(|p| p.value).collect();
                let at = nearest(&values, x).map(|i| &sweep.points[i]);
                let long = at
                    .and_then(|p| p.long_run.as_ref())
                    .filter(|l| l.min.len() > *species)
                    .map(|l| {
                        format!(
                            "; long run {} to {}",
                            round_sig(l.min[*species], 4),
                            round_sig(l.max[*species], 4)
                        )
                    })
                    .unwrap_or_default();
                format!(
                    "{param} = {}: {} {}{long} — click to use this value",
                    round_sig(at.map_or(x, |p| p.value), 4),
                    labels.species.get(*species).map_or("", String::as_str),
                    round_sig(y, 4)
                )
            }
            Figure::OutcomeMap { map, labels } => match map_cell(map, x, y) {
                Some(cell) => format!(
                    "{} = {}, {} = {}: {} — click to use these values",
                    map.x.param,
                    round_sig(cell.x, 4),
                    map.y.param,
                    round_sig(cell.y, 4),
                    tussock_charts::class_label(cell.class, &labels.species)
                ),
                None => format!(
                    "{} = {}, {} = {}: not computed",
                    map.x.param,
                    round_sig(x, 4),
                    map.y.param,
                    round_sig(y, 4)
                ),
            },
            Figure::Fan { summary, species } => {
                let (Some(i), Some(fan)) = (nearest(&summary.times, x), summary.fan.get(*species))
                else {
                    return String::new();
                };
                format!(
                    "t = {} {}: median {}, half the runs {}–{}, 90% {}–{}",
                    round_sig(summary.times[i], 4),
                    summary.time_unit,
                    round_sig(fan.median[i], 4),
                    round_sig(fan.p25[i], 4),
                    round_sig(fan.p75[i], 4),
                    round_sig(fan.p05[i], 4),
                    round_sig(fan.p95[i], 4)
                )
            }
            Figure::Extinction { summary } => {
                let Some(i) = nearest(&summary.times, x) else {
                    return String::new();
                };
                let parts: Vec<String> = summary
                    .extinction_by_time
                    .iter()
                    .filter_map(|c| {
                        Some(format!(
                            "{} extinct {}",
                            c.species,
                            percent(*c.probability.get(i)?)
                        ))
                    })
                    .collect();
                format!(
                    "by t = {} {}: {}",
                    round_sig(summary.times[i], 4),
                    summary.time_unit,
                    parts.join(", ")
                )
            }
            Figure::Establishment { table } => {
                let founders: Vec<f64> = table.rows.iter().map(|r| r.founders as f64).collect();
                let Some(i) = nearest(&founders, x) else {
                    return String::new();
                };
                let parts: Vec<String> = table
                    .rows
                    .iter()
                    .filter(|r| r.founders == table.rows[i].founders)
                    .map(|r| {
                        format!(
                            "{} release(s): {}",
                            r.releases,
                            r.probability.map_or("–".to_string(), percent)
                        )
                    })
                    .collect();
                format!(
                    "{} founders: established {}",
                    table.rows[i].founders,
                    parts.join(", ")
                )
            }
            Figure::Residuals { labels, .. } => format!(
                "t = {} {}: residual {}",
                round_sig(x, 4),
                labels.time_unit,
                round_sig(y, 3)
            ),
            Figure::Variants { runs, species } => {
                let parts: Vec<String> = runs
                    .iter()
                    .filter_map(|(name, run)| {
                        let i = nearest(&run.trajectory.times, x)?;
                        Some(format!(
                            "{name} {}",
                            round_sig(run.trajectory.states[i][*species], 4)
                        ))
                    })
                    .collect();
                format!("t = {}: {}", round_sig(x, 4), parts.join(", "))
            }
        }
    }
}

fn unit_suffix(plan: &Plan) -> &'static str {
    match plan.unit {
        SizeUnit::Individuals => " individuals",
        SizeUnit::RatioToOther => " per individual of the other species",
    }
}

/// A probability as a percentage, e.g. `12.5%`.
pub fn percent(p: f64) -> String {
    // Interval ends computed as 0 or 1 can carry rounding noise (1e-19).
    let v = 100.0 * p;
    let v = if v.abs() < 1e-9 {
        0.0
    } else if (v - 100.0).abs() < 1e-9 {
        100.0
    } else {
        v
    };
    format!("{}%", round_sig(v, 3))
}

/// Index of the value nearest to `x`.
pub fn nearest(values: &[f64], x: f64) -> Option<usize> {
    values
        .iter()
        .enumerate()
        .filter(|(_, v)| v.is_finite())
        .min_by(|a, b| (a.1 - x).abs().total_cmp(&(b.1 - x).abs()))
        .map(|(i, _)| i)
}

/// The computed cell of a map nearest to a point, if its row was computed.
pub fn map_cell(map: &OutcomeMap, x: f64, y: f64) -> Option<&MapCell> {
    let near = |values: &[f64], v: f64, log: bool| {
        let key = |u: f64| if log { u.max(1e-300).ln() } else { u };
        values
            .iter()
            .enumerate()
            .min_by(|a, b| {
                (key(*a.1) - key(v))
                    .abs()
                    .total_cmp(&(key(*b.1) - key(v)).abs())
            })
            .map(|(i, _)| i)
    };
    let log = |spacing| matches!(spacing, tussock_core::sweep::Spacing::Log);
    let row_index = near(&map.y.values, y, log(map.y.spacing))?;
    let col = near(&map.x.values, x, log(map.x.spacing))?;
    map.rows
        .iter()
        .find(|r| r.index == row_index)
        .and_then(|r| r.cells.get(col))
}

/// A file name part ([`tussock_charts::slug`]), `tussock` when nothing is left.
pub fn slug(text: &str) -> String {
    tussock_charts::slug(text, "tussock")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::jobs::{run_to_end, Job, Outcome, Task};
    use crate::state::Workbench;

    /// Polylines drawn in a colour, as lists of points.
    fn polylines(svg: &str, colour: &str) -> Vec<usize> {
        let doc = roxmltree::Document::parse(svg).expect("the SVG parses as XML");
        doc.descendants()
            .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(colour))
            .map(|n| {
                n.attribute("points")
                    .unwrap_or("")
                    .split_whitespace()
                    .count()
            })
            .collect()
    }

    #[test]
    fn exported_svg_parses_and_holds_each_species_line() {
        let bench = Workbench::starting();
        let svg = Figure::TimeSeries {
            run: bench.run.clone(),
            log_y: false,
            observed: None,
        }
        .to_svg()
        .unwrap();
        for name in &bench.run.problem.species {
            assert!(
                svg.contains(name.as_str()),
                "{name} missing from the legend"
            );
        }
        let n = bench.run.trajectory.times.len();
        // The first species is one solid line through every output time.
        let first = polylines(&svg, "#0072B2");
        assert!(
            first.contains(&n),
            "no single line of {n} points: {first:?}"
        );
        // The second is dashed: its dashes together span the whole series.
        let second = polylines(&svg, "#D55E00");
        assert!(second.len() > 10, "second species should be dashed");
        assert!(second.iter().sum::<usize>() >= n / 2);
    }

    fn scenario(name: &str) -> tussock_core::Scenario {
        let text = std::fs::read_to_string(format!(
            "{}/../examples/{name}.json",
            env!("CARGO_MANIFEST_DIR")
        ))
        .unwrap();
        tussock_core::Scenario::from_json(&text).unwrap()
    }

    #[test]
    fn every_figure_of_a_study_exports_and_describes_its_points() {
        use tussock_core::sweep::map::MapRequest;
        use tussock_core::sweep::{AxisSpec, Spacing, SweepOptions};
        let s = scenario("microcosm-competition");
        let axis = |param: &str| AxisSpec {
            param: param.into(),
            from: 100.0,
            to: 900.0,
            steps: 10,
            spacing: Spacing::Linear,
        };
        let job = Job {
            id: 1,
            scenario: s.clone(),
            task: Task::Map {
                request: MapRequest {
                    x: axis("K1"),
                    y: axis("K2"),
                    options: SweepOptions::default(),
                    shard: None,
                },
            },
        };
        let Ok(Outcome::Map(map)) = run_to_end(&job) else {
            panic!("no map")
        };
        let labels = Labels {
            species: vec!["green alga".into(), "diatom".into()],
            time_unit: "days".into(),
        };
        let figure = Figure::OutcomeMap {
            map: Shared::new(map),
            labels,
        };
        assert!(figure.to_svg().unwrap().contains("<rect"));
        assert!(figure.clickable());
        // K1 large and K2 small: the alga wins (Gause's criteria).
        let text = figure.describe_point(880.0, 120.0);
        assert!(text.contains("only green alga"), "{text}");
        assert_eq!(figure.file_stem(), "outcome-map-k1-k2");
    }

    #[test]
    fn percentages_hide_rounding_noise() {
        assert_eq!(percent(8.56e-19), "0%");
        assert_eq!(percent(1.0 - 1e-16), "100%");
        assert_eq!(percent(0.1234), "12.3%");
    }

    #[test]
    fn file_names_are_plain() {
        assert_eq!(
            slug("Spider mite / predatory mite"),
            "spider-mite-predatory-mite"
        );
        assert_eq!(slug("<script>"), "script");
        assert_eq!(slug("∅"), "tussock");
    }
}
