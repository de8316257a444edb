//! The results as CSV tables for `--out`, in the column layout of the app's
//! CSV downloads (app/src/export.rs), so a table from the command line and
//! one from the browser read the same. Numbers are written in their
//! shortest exact form; a missing value is an empty cell.

use tussock_core::fit::FitResult;
use tussock_core::plan::Plan;
use tussock_core::stochastic::{EnsembleSummary, EstablishmentTable};
use tussock_core::sweep::line::LineSweep;
use tussock_core::sweep::map::OutcomeMap;

/// A CSV document built row by row, quoted as the CLI's other CSV is.
struct Table {
    text: String,
}

impl Table {
    fn new<S: AsRef<str>>(header: &[S]) -> Table {
        let mut table = Table {
            text: String::new(),
        };
        table.row(header);
        table
    }

    fn row<S: AsRef<str>>(&mut self, cells: &[S]) {
        let cells: Vec<String> = cells.iter().map(|c| crate::csv_field(c.as_ref())).collect();
        self.text += &cells.join(",");
        self.text.push('\n');
    }
}

/// A number for a cell: shortest exact form, `inf`/`-inf`, empty for NaN.
fn num(v: f64) -> String {
    if v.is_nan() {
        String::new()
    } else {
        v.to_string()
    }
}

fn opt(v: Option<f64>) -> String {
    v.map(num).unwrap_or_default()
}

/// One row per equilibrium per value, with the long run's minimum and
/// maximum of every species alongside.
pub fn line_csv(sweep: &LineSweep, species: &[String]) -> String {
    let mut header = vec![
        sweep.axis.param.clone(),
        "branch".into(),
        "stability".into(),
        "feasible".into(),
    ];
    header.extend(species.iter().map(|s| format!("{s} equilibrium")));
    for s in species {
        header.push(format!("{s} long-run min"));
        header.push(format!("{s} long-run max"));
    }
    let mut t = Table::new(&header);
    for p in &sweep.points {
        let long = p.long_run.as_ref();
        let long: Vec<String> = (0..species.len())
            .flat_map(|i| {
                [
                    opt(long.and_then(|l| l.min.get(i).copied())),
                    opt(long.and_then(|l| l.max.get(i).copied())),
                ]
            })
            .collect();
        for e in &p.equilibria {
            let q = &e.equilibrium;
            let mut row = vec![
                num(p.value),
                e.branch.to_string(),
                q.stability.label().to_string(),
                q.feasible.to_string(),
            ];
            row.extend((0..species.len()).map(|i| opt(q.state.get(i).copied())));
            row.extend(long.iter().cloned());
            t.row(&row);
        }
    }
    t.text
}

/// One row per computed cell: the two values, the outcome in words and
/// its class key.
pub fn map_csv(map: &OutcomeMap, species: &[String]) -> String {
    let mut t = Table::new(&[
        map.x.param.as_str(),
        map.y.param.as_str(),
        "outcome",
        "class",
    ]);
    for cell in map.rows.iter().flat_map(|r| &r.cells) {
        let class = serde_json::to_value(cell.class)
            .ok()
            .and_then(|v| v.as_str().map(str::to_string))
            .unwrap_or_default();
        t.row(&[
            num(cell.x),
            num(cell.y),
            tussock_charts::class_label(cell.class, species),
            class,
        ]);
    }
    t.text
}

/// Quantiles of every species at every summary time, then the chance
/// each is extinct by then.
pub fn ensemble_csv(summary: &EnsembleSummary) -> String {
    const QUANTILES: [&str; 6] = ["p05", "p25", "median", "p75", "p95", "mean"];
    let mut header = vec!["t".to_string()];
    for f in &summary.fan {
        header.extend(QUANTILES.iter().map(|q| format!("{} {q}", f.species)));
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
    t.text
}

/// One row per number of founders and of releases.
pub fn founders_csv(table: &EstablishmentTable) -> String {
    let mut t = Table::new(&[
        "founders",
        "releases",
        "runs",
        "established",
        "probability",
        "ci_low",
        "ci_high",
        "partial",
    ]);
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
    t.text
}

/// One row per estimate, then the dispersion `k` of a negative binomial
/// fit (the app's table leaves it out).
pub fn fit_csv(fit: &FitResult) -> String {
    let mut t = Table::new(&[
        "name",
        "label",
        "estimate",
        "se",
        "ci_low",
        "ci_high",
        "lower_bound",
        "upper_bound",
    ]);
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
    t.text
}

/// Each row of a plan, one line per point of its response curve.
pub fn plan_csv(plan: &Plan) -> String {
    let mut t = Table::new(&[
        "first_release",
        "releases",
        "every",
        "size",
        "margin",
        "goal_met",
        "smallest_size",
        "best",
    ]);
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
    t.text
}
