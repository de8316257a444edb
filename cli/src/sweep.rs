//! `tussock sweep`: one-parameter sweeps (bifurcation diagrams) and
//! two-parameter outcome maps, in parallel over the machine's cores.
//!
//! Points and rows are independent and each is computed exactly as the
//! core's serial `sweep_line`/`sweep_map` would, so the output does not
//! depend on the number of threads. `--shard i/n` computes rows r with
//! r mod n = i − 1 of a map, for job arrays; `--merge` joins the JSON of
//! the shards (CSV shards join by concatenating their rows).

use std::io::Write;
use std::path::PathBuf;

use crate::out::{self, OutDir};
use tussock_charts::tables;

use anyhow::{bail, Context, Result};
use rayon::prelude::*;
use tussock_core::analysis::round_sig;
use tussock_core::sweep::line::{LineRequest, LineSweep};
use tussock_core::sweep::map::{MapRequest, OutcomeMap};
use tussock_core::sweep::{AxisSpec, Simulate, Spacing, SweepError, SweepOptions};

#[derive(clap::Args)]
pub struct SweepArgs {
    /// Scenario file (JSON); its parameters are the base the sweep varies.
    #[arg(required_unless_present = "merge")]
    file: Option<PathBuf>,
    /// Parameter to sweep: a model symbol (K, alpha12, …) or harvest[i].
    #[arg(long, required_unless_present = "merge")]
    param: Option<String>,
    /// First value.
    #[arg(long, allow_negative_numbers = true)]
    from: Option<f64>,
    /// Last value.
    #[arg(long, allow_negative_numbers = true)]
    to: Option<f64>,
    /// Number of values, ends included.
    #[arg(long, default_value_t = 101)]
    steps: usize,
    /// Space the values evenly on a log scale.
    #[arg(long)]
    log: bool,
    /// Second parameter: makes an outcome map over a grid (rows follow it).
    #[arg(long)]
    param2: Option<String>,
    #[arg(long, allow_negative_numbers = true)]
    from2: Option<f64>,
    #[arg(long, allow_negative_numbers = true)]
    to2: Option<f64>,
    #[arg(long, default_value_t = 101)]
    steps2: usize,
    #[arg(long)]
    log2: bool,
    /// Time simulated for each long run (default: chosen from the
    /// equilibria's time scales, at least the scenario's horizon).
    #[arg(long)]
    horizon: Option<f64>,
    /// Simulate every map cell, not only those theory cannot decide.
    #[arg(long)]
    simulate_all: bool,
    /// Compute only shard i of n of a map's rows (rows r with r mod n = i − 1).
    #[arg(long, value_name = "i/n")]
    shard: Option<String>,
    /// Join the JSON outputs of a map's shards instead of computing.
    #[arg(long, num_args = 1.., value_name = "SHARD.json", conflicts_with = "file")]
    merge: Vec<PathBuf>,
    /// Threads to use (default: all cores).
    #[arg(long)]
    threads: Option<usize>,
    /// Write JSON (default CSV).
    #[arg(long, conflicts_with = "csv")]
    json: bool,
    /// Write CSV (the default).
    #[arg(long)]
    csv: bool,
    /// Also write into DIR, made if missing: one-parameter-sweep.csv and a
    /// bifurcation-SPECIES.svg per species, or outcome-map.csv and
    /// outcome-map.svg for a map.
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
}

pub fn sweep(args: &SweepArgs) -> Result<()> {
    if !args.merge.is_empty() {
        return merge(args);
    }
    let file = args.file.as_deref().context("give a scenario file")?;
    let problem = crate::load_problem(file)?;
    let out_dir = OutDir::open(args.out.as_ref())?;
    if !problem.schedule.is_empty() {
        eprintln!("tussock: warning: a sweep ignores the scenario's events (it studies constant parameters)");
    }
    let options = SweepOptions {
        horizon: args.horizon,
        simulate: if args.simulate_all {
            Simulate::Always
        } else {
            Simulate::WhenUndecided
        },
        ..SweepOptions::default()
    };
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(args.threads.unwrap_or(0))
        .build()
        .context("cannot start the worker threads")?;
    let x = axis(
        args.param.as_deref(),
        (args.from, args.to),
        args.steps,
        args.log,
        "",
    )?;
    match &args.param2 {
        None => {
            if args.shard.is_some() {
                bail!("--shard splits a map's rows: give --param2 too");
            }
            let request = LineRequest { axis: x, options };
            let plan = request.plan(&problem).map_err(flags)?;
            let points = pool.install(|| {
                (0..plan.len())
                    .into_par_iter()
                    .map(|i| plan.point(i))
                    .collect()
            });
            let result = plan.finish(points, false);
            if let Some(dir) = out_dir {
                write_line_files(&dir, &result, &problem.species)?;
            }
            write(args.json, &result, |out| {
                line_csv(out, &result, &problem.species)
            })
        }
        Some(param2) => {
            let y = axis(
                Some(param2),
                (args.from2, args.to2),
                args.steps2,
                args.log2,
                "2",
            )?;
            let shard = args
                .shard
                .as_deref()
                .map(tussock_cli::parse::shard)
                .transpose()?;
            let request = MapRequest {
                x,
                y,
                options,
                shard,
            };
            let plan = request.plan(&problem).map_err(flags)?;
            let rows = pool.install(|| plan.rows().into_par_iter().map(|r| plan.row(r)).collect());
            let result = plan.finish(rows, false);
            if let Some(dir) = out_dir {
                write_map_files(&dir, &result, &problem.species)?;
            }
            write(args.json, &result, |out| map_csv(out, &result))
        }
    }
}

fn axis(
    param: Option<&str>,
    (from, to): (Option<f64>, Option<f64>),
    steps: usize,
    log: bool,
    suffix: &str,
) -> Result<AxisSpec> {
    let param = param.context("give --param")?;
    let (Some(from), Some(to)) = (from, to) else {
        bail!("give --from{suffix} and --to{suffix} for {param}");
    };
    Ok(AxisSpec {
        param: param.to_string(),
        from,
        to,
        steps,
        spacing: if log { Spacing::Log } else { Spacing::Linear },
    })
}

/// Request field paths in errors become the flags that set them.
fn flags(e: SweepError) -> anyhow::Error {
    let text = e.to_string();
    let renamed = [("axis.", ""), ("x.", ""), ("y.", "2")]
        .iter()
        .find_map(|(prefix, suffix)| {
            let rest = text.strip_prefix(prefix)?;
            let (field, reason) = rest.split_once(':')?;
            let flag = match field {
                "spacing" => "log".to_string(),
                f => f.to_string(),
            };
            Some(format!("--{flag}{suffix}:{reason}"))
        });
    anyhow::anyhow!(renamed.unwrap_or(text))
}

fn write(
    json: bool,
    value: &impl serde::Serialize,
    csv: impl FnOnce(&mut dyn Write) -> Result<()>,
) -> Result<()> {
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    if json {
        serde_json::to_writer(&mut out, value)?;
        writeln!(out)?;
    } else {
        csv(&mut out)?;
    }
    out.flush()?;
    Ok(())
}

fn merge(args: &SweepArgs) -> Result<()> {
    let mut parts = Vec::new();
    for path in &args.merge {
        let text = std::fs::read_to_string(path)
            .with_context(|| format!("cannot read {}", path.display()))?;
        let part: OutcomeMap = serde_json::from_str(&text)
            .with_context(|| format!("{}: not the JSON of a map shard", path.display()))?;
        parts.push(part);
    }
    let whole = OutcomeMap::merge(parts)?;
    if let Some(dir) = OutDir::open(args.out.as_ref())? {
        // The shards do not carry the species' names.
        write_map_files(&dir, &whole, &[])?;
    }
    if whole.partial {
        eprintln!(
            "tussock: warning: the merged map is partial (rows missing or a shard stopped early)"
        );
    }
    write(args.json, &whole, |out| map_csv(out, &whole))
}

/// The sweep's table and its bifurcation diagram for every species.
fn write_line_files(dir: &OutDir, sweep: &LineSweep, species: &[String]) -> Result<()> {
    dir.write("one-parameter-sweep.csv", &tables::line_csv(sweep, species))?;
    for (i, stem) in out::species_stems(species).iter().enumerate() {
        dir.figure(
            &format!("bifurcation-{stem}.svg"),
            tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
                tussock_charts::draw_bifurcation(root, sweep, i, species, &sweep.axis.param, 1.0)
            }),
        )?;
    }
    Ok(())
}

/// The map's table and figure.
fn write_map_files(dir: &OutDir, map: &OutcomeMap, species: &[String]) -> Result<()> {
    dir.write("outcome-map.csv", &tables::map_csv(map, species))?;
    dir.figure(
        "outcome-map.svg",
        tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
            tussock_charts::draw_outcome_map(root, map, &map.x.param, &map.y.param, 1.0)
        }),
    )
}

fn numbers(values: &[f64]) -> String {
    values
        .iter()
        .map(|v| v.to_string())
        .collect::<Vec<_>>()
        .join(",")
}

/// One row per equilibrium (`record` = equilibrium, `label` its stability),
/// one per long run (`label` its kind, densities the minimum then the
/// maximum) and one per bifurcation (`record` its kind).
fn line_csv(out: &mut dyn Write, sweep: &LineSweep, species: &[String]) -> Result<()> {
    let n = species.len();
    let names: Vec<String> = species.iter().map(|s| crate::csv_field(s)).collect();
    let max_names: Vec<String> = species
        .iter()
        .map(|s| crate::csv_field(&format!("{s} max")))
        .collect();
    writeln!(
        out,
        "{},record,branch,label,{},{}",
        crate::csv_field(&sweep.axis.param),
        names.join(","),
        max_names.join(",")
    )?;
    let blank = vec![""; n].join(",");
    for point in &sweep.points {
        for e in &point.equilibria {
            let q = &e.equilibrium;
            let label = if q.feasible {
                q.stability.label().to_string()
            } else {
                format!("{} (infeasible)", q.stability.label())
            };
            writeln!(
                out,
                "{},equilibrium,{},{label},{},{blank}",
                point.value,
                e.branch,
                numbers(&q.state)
            )?;
        }
        match (&point.long_run, &point.failure) {
            (Some(lr), _) => writeln!(
                out,
                "{},long_run,,{},{},{}",
                point.value,
                serde_json::to_value(lr.kind)?.as_str().unwrap_or("?"),
                numbers(&lr.min),
                numbers(&lr.max)
            )?,
            (None, failure) => writeln!(
                out,
                "{},failed,,{},{blank},{blank}",
                point.value,
                crate::csv_field(failure.as_deref().unwrap_or("failed"))
            )?,
        }
    }
    for b in &sweep.bifurcations {
        writeln!(
            out,
            "{},{},{},precision {},{},{blank}",
            b.value,
            serde_json::to_value(b.kind)?.as_str().unwrap_or("?"),
            b.branch,
            round_sig(b.precision, 2),
            numbers(&b.state)
        )?;
    }
    Ok(())
}

/// One row per cell: the two parameter values, class, rule, attractors
/// (`a b; c d`), cycle range and reason.
fn map_csv(out: &mut dyn Write, map: &OutcomeMap) -> Result<()> {
    writeln!(
        out,
        "{},{},class,rule,attractors,cycle_min,cycle_max,reason",
        crate::csv_field(&map.x.param),
        crate::csv_field(&map.y.param)
    )?;
    let joined = |v: &[f64]| {
        v.iter()
            .map(|x| x.to_string())
            .collect::<Vec<_>>()
            .join(" ")
    };
    for row in &map.rows {
        for c in &row.cells {
            let attractors = c
                .attractors
                .iter()
                .map(|a| joined(a))
                .collect::<Vec<_>>()
                .join("; ");
            let (lo, hi) = c
                .cycle
                .as_ref()
                .map(|cy| (joined(&cy.min), joined(&cy.max)))
                .unwrap_or_default();
            writeln!(
                out,
                "{},{},{},{},{attractors},{lo},{hi},{}",
                c.x,
                c.y,
                serde_json::to_value(c.class)?.as_str().unwrap_or("?"),
                serde_json::to_value(c.rule)?.as_str().unwrap_or("?"),
                crate::csv_field(c.reason.as_deref().unwrap_or(""))
            )?;
        }
    }
    Ok(())
}
