//! Tables as CSV: the trajectory, release plans, sweeps, outcome maps,
//! ensemble summaries, founder tables and fits. The page offers each beside
//! its table or chart; the command line's `--out` writes the same files.

use tussock_core::fit::FitResult;
use tussock_core::plan::Plan;
use tussock_core::stochastic::{EnsembleSummary, EstablishmentTable};
use tussock_core::sweep::line::LineSweep;
use tussock_core::sweep::map::OutcomeMap;

use tussock_core::run::Run;

/// A CSV document built row by row (RFC 4180 quoting by the `csv` crate).
struct Table {
    writer: csv::Writer<Vec<u8>>,
}

impl Table {
    fn new(header: &[String]) -> Table {
        let mut writer = csv::Writer::from_writer(Vec::new());
        let _ = writer.write_record(header);
        Table { writer }
    }

    fn row(&mut self, cells: &[String]) {
        // Writing to memory cannot fail.
        let _ = self.writer.write_record(cells);
    }

    fn finish(self) -> String {
        let bytes = self.writer.into_inner().unwrap_or_default();
        String::from_utf8(bytes).unwrap_or_default()
    }
}

/// A number for a CSV cell: shortest exact form, empty for none.
fn num(v: f64) -> String {
    if v.is_finite() {
        format!("{v}")
    } else if v.is_nan() {
        String::new()
    } else if v > 0.0 {
        "inf".into()
    } else {
        "-inf".into()
    }
}

fn opt(v: Option<f64>) -> String {
    v.map(num).unwrap_or_default()
}

fn names(v: &[&str]) -> Vec<String> {
    v.iter().map(|s| s.to_string()).collect()
}

/// The trajectory: `t` and one column per species.
pub fn trajectory_csv(run: &Run) -> String {
    let mut header = vec!["t".to_string()];
    header.extend(run.problem.species.iter().cloned());
    let mut t = Table::new(&header);
    for (time, state) in run.trajectory.times.iter().zip(&run.trajectory.states) {
        let mut row = vec![num(*time)];
        row.extend((0..run.trajectory.n_species).map(|i| num(state[i])));
        t.row(&row);
    }
    t.finish()
}

/// Each row of a plan, then its response curve points.
pub fn plan_csv(plan: &Plan) -> String {
    let mut t = Table::new(&names(&[
        "first_release",
        "releases",
        "every",
        "size",
        "margin",
        "goal_met",
        "smallest_size",
        "best",
    ]));
    for (i, row) in plan.rows.iter().enumerate() {
        for e in &row.curve {
            t.row(&[
                num(row.time),
                row.count.to_string(),
                num(row.every),
                num(e.size),
                num(e.margin),
                e.met.to_string(),
                opt(row.smallest),
                (plan.best == Some(i)).to_string(),
            ]);
        }
    }
    t.finish()
}

/// One row per equilibrium per value; long-run min and max alongside.
pub fn line_csv(sweep: &LineSweep, species: &[String]) -> String {
    let mut header = vec![
        sweep.axis.param.clone(),
        "branch".into(),
        "stability".into(),
        "feasible".into(),
    ];
    for s in species {
        header.push(format!("{s} equilibrium"));
    }
    for s in species {
        header.push(format!("{s} long-run min"));
        header.push(format!("{s} long-run max"));
    }
    let mut t = Table::new(&header);
    for p in &sweep.points {
        let long: Vec<String> = (0..species.len())
            .flat_map(|i| {
                let l = p.long_run.as_ref();
                [
                    opt(l.and_then(|l| l.min.get(i).copied())),
                    opt(l.and_then(|l| l.max.get(i).copied())),
                ]
            })
            .collect();
        for e in &p.equilibria {
            let mut row = vec![
                num(p.value),
                e.branch.to_string(),
                e.equilibrium.stability.label().to_string(),
                e.equilibrium.feasible.to_string(),
            ];
            row.extend((0..species.len()).map(|i| opt(e.equilibrium.state.get(i).copied())));
            row.extend(long.iter().cloned());
            t.row(&row);
        }
    }
    t.finish()
}

/// One row per computed cell.
pub fn map_csv(map: &OutcomeMap, species: &[String]) -> String {
    let mut t = Table::new(&[
        map.x.param.clone(),
        map.y.param.clone(),
        "outcome".into(),
        "class".into(),
    ]);
    for row in &map.rows {
        for cell in &row.cells {
            t.row(&[
                num(cell.x),
                num(cell.y),
                crate::class_label(cell.class, species),
                serde_json::to_value(cell.class)
                    .ok()
                    .and_then(|v| v.as_str().map(str::to_string))
                    .unwrap_or_default(),
            ]);
        }
    }
    t.finish()
}

/// Quantiles of every species at every summary time, with extinction by then.
pub fn ensemble_csv(summary: &EnsembleSummary) -> String {
    let mut header = vec!["t".to_string()];
    for f in &summary.fan {
        for q in ["p05", "p25", "median", "p75", "p95", "mean"] {
            header.push(format!("{} {q}", f.species));
        }
    }
    for c in &summary.extinction_by_time {
        header.push(format!("{} extinct by t", c.species));
    }
    let mut t = Table::new(&header);
    for (k, time) in summary.times.iter().enumerate() {
        let mut row = vec![num(*time)];
        for f in &summary.fan {
            for series in [&f.p05, &f.p25, &f.median, &f.p75, &f.p95, &f.mean] {
                row.push(opt(series.get(k).copied()));
            }
        }
        for c in &summary.extinction_by_time {
            row.push(opt(c.probability.get(k).copied()));
        }
        t.row(&row);
    }
    t.finish()
}

pub fn founders_csv(table: &EstablishmentTable) -> String {
    let mut t = Table::new(&names(&[
        "founders",
        "releases",
        "runs",
        "established",
        "probability",
        "ci_low",
        "ci_high",
        "partial",
    ]));
    for r in &table.rows {
        t.row(&[
            r.founders.to_string(),
            r.releases.to_string(),
            r.runs.to_string(),
            r.established_runs.to_string(),
            opt(r.probability),
            opt(r.ci.map(|c| c[0])),
            opt(r.ci.map(|c| c[1])),
            r.partial.to_string(),
        ]);
    }
    t.finish()
}

/// One row per estimate, then the dispersion `k` of a negative binomial fit.
pub fn fit_csv(fit: &FitResult) -> String {
    let mut t = Table::new(&names(&[
        "name",
        "label",
        "estimate",
        "se",
        "ci_low",
        "ci_high",
        "lower_bound",
        "upper_bound",
    ]));
    for e in fit.estimates.iter().chain(fit.dispersion.iter()) {
        t.row(&[
            e.name.clone(),
            e.label.clone(),
            num(e.value),
            opt(e.se),
            opt(e.ci[0]),
            opt(e.ci[1]),
            num(e.lower),
            num(e.upper),
        ]);
    }
    t.finish()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run_of(json: &str) -> Run {
        let problem = tussock_core::Scenario::from_json(json)
            .and_then(|s| s.validate())
            .unwrap();
        Run::compute(problem, &[])
    }

    fn read(text: &str) -> (Vec<String>, Vec<Vec<String>>) {
        let mut r = csv::Reader::from_reader(text.as_bytes());
        let header = r.headers().unwrap().iter().map(str::to_string).collect();
        let rows = r
            .records()
            .map(|rec| rec.unwrap().iter().map(str::to_string).collect())
            .collect();
        (header, rows)
    }

    #[test]
    fn the_trajectory_has_its_header_and_a_row_per_output_time() {
        let run = run_of(include_str!("../../examples/greenhouse-mites.json"));
        let (header, rows) = read(&trajectory_csv(&run));
        assert_eq!(header, ["t", "spider mite", "predatory mite"]);
        assert_eq!(rows.len(), run.trajectory.times.len());
        let last = rows.last().unwrap();
        assert_eq!(last[0].parse::<f64>().unwrap(), run.problem.t_end);
        // Exact round trip of every value.
        assert_eq!(
            last[1].parse::<f64>().unwrap(),
            run.trajectory.states.last().unwrap()[0]
        );
    }

    #[test]
    fn names_with_commas_and_quotes_are_quoted() {
        let run = run_of(
            r#"{"model": "logistic", "params": {"b": 1, "d": 0.1, "K": 10}, "initial": [1], "t_end": 2, "output_step": 1, "species": ["ants, \"red\""]}"#,
        );
        let (header, rows) = read(&trajectory_csv(&run));
        assert_eq!(header, ["t", "ants, \"red\""]);
        assert_eq!(rows.len(), 3);
    }

    #[test]
    fn founders_and_fit_tables_have_a_row_each() {
        let text = std::fs::read_to_string(format!(
            "{}/../examples/reserve-reintroduction.json",
            env!("CARGO_MANIFEST_DIR")
        ))
        .unwrap();
        let s = tussock_core::Scenario::from_json(&text).unwrap();
        let request = tussock_core::stochastic::EstablishmentRequest {
            founders: vec![4, 8],
            releases: vec![1, 2],
            runs: 20,
            horizon: Some(5.0),
            seed: 2,
            ..Default::default()
        };
        let table = tussock_core::stochastic::establishment(
            &s.validate().unwrap(),
            &request,
            &mut |_, _| true,
        )
        .unwrap();
        let (header, rows) = read(&founders_csv(&table));
        assert_eq!(header[0], "founders");
        assert_eq!(rows.len(), 4);
    }
}
