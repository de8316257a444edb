//! `tussock`: the command-line twin of the workbench. Thin glue over
//! `tussock-core`; every message to the user is one line, and no input makes
//! it panic.

mod ensemble;
mod fit;
mod out;
mod sweep;

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{Context, Result};
use clap::{Parser, Subcommand};
use tussock_core::analysis::{self, LongRunKind};
use tussock_core::data::CountData;
use tussock_core::models::MODELS;
use tussock_core::run::Run;
use tussock_core::{solve, Problem, Scenario, Trajectory};

use out::OutDir;

#[derive(Parser)]
#[command(
    name = "tussock",
    version,
    about = "Plan with two interacting populations: simulate scenario files from the command line.",
    after_help = "run, plan, sweep, fit, ensemble and founders take --out DIR: they then also write their tables as CSV and their figures as SVG (the app's figures) into DIR, and name each file written on stderr."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Simulate a scenario file; writes the trajectory as CSV (t,<species…>) to stdout.
    Run {
        /// Scenario file (JSON).
        file: PathBuf,
        /// Write one JSON object with times, states, stop reason and step statistics instead of CSV.
        #[arg(long)]
        json: bool,
        /// Also write trajectory.csv, time-series.svg and (two species) phase-plane.svg into DIR, made if missing.
        #[arg(long, value_name = "DIR")]
        out: Option<PathBuf>,
    },
    /// Find equilibria and their stability, the model's verdict and the long-run behaviour.
    Analyze {
        /// Scenario file (JSON).
        file: PathBuf,
        /// Write one JSON object instead of a readable report.
        #[arg(long)]
        json: bool,
    },
    /// Find the smallest release that meets a goal, over release size, time and number of releases.
    Plan(PlanArgs),
    /// Sweep one parameter (equilibria, long run, bifurcations) or two (an outcome map).
    Sweep(sweep::SweepArgs),
    /// Fit the scenario's model to counts in a CSV file: estimates, intervals, AIC, warnings.
    Fit(fit::FitArgs),
    /// List the models and their parameters.
    Models,
    /// Run many stochastic simulations: extinction risk, time to extinction and the spread of outcomes.
    Ensemble(ensemble::EnsembleArgs),
    /// Chance that released founders establish, by number of founders and releases.
    Founders(ensemble::FoundersArgs),
}

#[derive(clap::Args)]
struct PlanArgs {
    /// Scenario file (JSON).
    file: PathBuf,
    /// pest-below: the pest under its economic threshold from --by to --until;
    /// persist: --persist-species stays at or above --level until --until.
    #[arg(long, value_parser = ["pest-below", "persist"])]
    goal: String,
    /// Start of the window the pest must stay below its threshold (pest-below).
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    by: f64,
    /// End of the goal window; default the horizon.
    #[arg(long, allow_negative_numbers = true)]
    until: Option<f64>,
    /// Index of the species released (default 1, the predator).
    #[arg(long, default_value_t = 1)]
    species: usize,
    /// Count release sizes as a ratio to the other species at release time (0.1 = 1:10) instead of individuals.
    #[arg(long)]
    ratio: bool,
    /// Largest size per release searched.
    #[arg(long, allow_negative_numbers = true)]
    max: f64,
    /// First release times to try, comma-separated.
    #[arg(
        long,
        value_delimiter = ',',
        default_value = "0",
        allow_negative_numbers = true
    )]
    times: Vec<f64>,
    /// Numbers of releases to try, comma-separated.
    #[arg(long, value_delimiter = ',', default_value = "1")]
    counts: Vec<u32>,
    /// Spacing of repeated releases, in time units.
    #[arg(long, default_value_t = 7.0, allow_negative_numbers = true)]
    every: f64,
    /// Species that must persist (persist; default the released species).
    #[arg(long)]
    persist_species: Option<usize>,
    /// Level it must stay at or above (persist).
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    level: f64,
    /// A species that must never fall below --floor (persist), e.g. the prey.
    #[arg(long)]
    floor_species: Option<usize>,
    /// The lowest density allowed for --floor-species.
    #[arg(long, allow_negative_numbers = true)]
    floor: Option<f64>,
    /// Points on the response curve.
    #[arg(long, default_value_t = 24)]
    curve_points: usize,
    /// Write one JSON object instead of a table.
    #[arg(long)]
    json: bool,
    /// Also write release-plan.csv, release-response.svg and release-timing.svg into DIR, made if missing.
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let outcome = match cli.command {
        Command::Run { file, json, out } => run(&file, json, out.as_ref()),
        Command::Analyze { file, json } => analyze(&file, json),
        Command::Plan(args) => plan(&args),
        Command::Sweep(args) => sweep::sweep(&args),
        Command::Fit(args) => fit::run(&args),
        Command::Models => models(),
        Command::Ensemble(args) => ensemble::ensemble(&args),
        Command::Founders(args) => ensemble::founders(&args),
    };
    match outcome {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("tussock: {}", one_line(&e));
            ExitCode::FAILURE
        }
    }
}

/// The whole error chain on one line.
fn one_line(e: &anyhow::Error) -> String {
    e.chain()
        .map(|c| c.to_string())
        .collect::<Vec<_>>()
        .join(": ")
        .replace('\n', " ")
}

fn load(file: &Path) -> Result<Scenario> {
    let bytes = std::fs::read(file).with_context(|| format!("cannot read {}", file.display()))?;
    let text = String::from_utf8(bytes)
        .map_err(|_| anyhow::anyhow!("{}: not a text file (invalid UTF-8)", file.display()))?;
    Scenario::from_json(&text).with_context(|| file.display().to_string())
}

fn load_problem(file: &Path) -> Result<Problem> {
    let scenario = load(file)?;
    scenario
        .validate()
        .with_context(|| file.display().to_string())
}

fn run(file: &Path, json: bool, out: Option<&PathBuf>) -> Result<()> {
    let scenario = load(file)?;
    let problem = scenario
        .validate()
        .with_context(|| file.display().to_string())?;
    let trajectory = match OutDir::open(out)? {
        Some(dir) => {
            // The figures need the analysis and the nullclines as well.
            let run = Run::compute(problem.clone(), &[]);
            dir.write(
                "trajectory.csv",
                &trajectory_csv(&run.trajectory, &run.problem.species)?,
            )?;
            dir.figure(
                "time-series.svg",
                time_series_svg(&run, scenario.data.as_ref()),
            )?;
            if run.trajectory.n_species == 2 {
                dir.figure(
                    "phase-plane.svg",
                    tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
                        tussock_charts::draw_phase_plane(root, &run, scenario.data.as_ref(), 1.0)
                    }),
                )?;
            }
            run.trajectory
        }
        None => solve(&problem),
    };
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    if json {
        let mut value = trajectory_json(&trajectory, &problem.species, &problem.time_unit);
        value["pulses"] = serde_json::to_value(&trajectory.pulses)?;
        value["crossings"] = serde_json::to_value(&trajectory.crossings)?;
        value["metrics"] =
            serde_json::to_value(tussock_core::metrics::metrics(&problem, &trajectory))?;
        serde_json::to_writer(&mut out, &value)?;
        writeln!(out)?;
    } else {
        write_csv(&mut out, &trajectory, &problem.species)?;
    }
    out.flush()?;
    if !trajectory.stop.is_finished() {
        eprintln!(
            "tussock: warning: {}",
            trajectory
                .stop
                .describe(&problem.species, &problem.time_unit)
        );
    }
    Ok(())
}

fn csv_field(name: &str) -> String {
    if name.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", name.replace('"', "\"\""))
    } else {
        name.to_string()
    }
}

fn write_csv(out: &mut impl Write, trajectory: &Trajectory, species: &[String]) -> Result<()> {
    let header: Vec<String> = std::iter::once("t".to_string())
        .chain(species.iter().map(|s| csv_field(s)))
        .collect();
    writeln!(out, "{}", header.join(","))?;
    for (t, state) in trajectory.times.iter().zip(&trajectory.states) {
        write!(out, "{t}")?;
        for i in 0..trajectory.n_species {
            write!(out, ",{}", state[i])?;
        }
        writeln!(out)?;
    }
    Ok(())
}

/// The trajectory as the CSV `run` writes to stdout.
fn trajectory_csv(trajectory: &Trajectory, species: &[String]) -> Result<String> {
    let mut bytes = Vec::new();
    write_csv(&mut bytes, trajectory, species)?;
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}

/// Densities against time (linear axis), with counts drawn over them.
fn time_series_svg(run: &Run, observed: Option<&CountData>) -> Result<String, String> {
    tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
        tussock_charts::draw_time_series(root, run, observed, 1.0, false)
    })
}

fn trajectory_json(
    trajectory: &Trajectory,
    species: &[String],
    time_unit: &str,
) -> serde_json::Value {
    let states: Vec<Vec<f64>> = trajectory
        .states
        .iter()
        .map(|s| s.iter().take(trajectory.n_species).copied().collect())
        .collect();
    serde_json::json!({
        "species": species,
        "time_unit": time_unit,
        "times": trajectory.times,
        "states": states,
        "stop": trajectory.stop,
        "stop_message": trajectory.stop.describe(species, time_unit),
        "stats": trajectory.stats,
    })
}

fn analyze(file: &Path, json: bool) -> Result<()> {
    let problem = load_problem(file)?;
    let report = analysis::analyze(&problem);
    if json {
        let value = serde_json::json!({
            "equilibria": report.equilibria.iter().map(|e| serde_json::json!({
                "state": e.state,
                "eigenvalues": e.eigenvalues.iter().map(|&(re, im)| [re, im]).collect::<Vec<_>>(),
                "stability": e.stability,
                "feasible": e.feasible,
            })).collect::<Vec<_>>(),
            "outcome": report.outcome.as_ref().map(|o| o.text.clone()),
            "outcome_kind": report.outcome.as_ref().map(|o| o.kind),
            "long_run": {
                "kind": report.long_run.kind,
                "period": report.long_run.period,
                "min": report.long_run.min,
                "max": report.long_run.max,
                "extinct": report.long_run.extinct,
                "window": [report.long_run.window.0, report.long_run.window.1],
            },
        });
        println!("{value}");
        return Ok(());
    }
    let names = &problem.species;
    let unit = &problem.time_unit;
    println!("{} — {}", problem.model.title, names.join(" and "));
    println!("Equilibria:");
    for e in &report.equilibria {
        let state: Vec<String> = e
            .state
            .iter()
            .zip(names)
            .map(|(v, s)| format!("{s} {v:.6}"))
            .collect();
        let eigs: Vec<String> = e
            .eigenvalues
            .iter()
            .map(|&(re, im)| {
                if im == 0.0 {
                    format!("{re:.6}")
                } else {
                    format!(
                        "{re:.6} {} {:.6}i",
                        if im < 0.0 { "−" } else { "+" },
                        im.abs()
                    )
                }
            })
            .collect();
        println!(
            "  {}: {}; eigenvalues {}{}",
            state.join(", "),
            e.stability.label(),
            eigs.join(", "),
            if e.feasible {
                ""
            } else {
                " (infeasible: a negative density)"
            }
        );
    }
    if let Some(o) = &report.outcome {
        println!("Verdict: {}", o.text);
    }
    let lr = &report.long_run;
    let ranges: Vec<String> = names
        .iter()
        .enumerate()
        .map(|(i, s)| format!("{s} {:.4} to {:.4}", lr.min[i], lr.max[i]))
        .collect();
    let what = match lr.kind {
        LongRunKind::Equilibrium => "settles to an equilibrium".to_string(),
        LongRunKind::Cycle => format!(
            "cycles with period {:.4} {unit}",
            lr.period.unwrap_or(f64::NAN)
        ),
        LongRunKind::Extinction => {
            let gone: Vec<&str> = names
                .iter()
                .zip(&lr.extinct)
                .filter(|(_, &x)| x)
                .map(|(s, _)| s.as_str())
                .collect();
            format!("{} die(s) out", gone.join(" and "))
        }
        LongRunKind::Unbounded => "grows without bound".to_string(),
        LongRunKind::Failed => lr.stop.describe(names, unit),
    };
    println!(
        "Long run (t = {:.0} to {:.0} {unit}): {what}; {}.",
        lr.window.0,
        lr.window.1,
        ranges.join(", ")
    );
    Ok(())
}

fn plan(args: &PlanArgs) -> Result<()> {
    use tussock_core::plan::{self, Goal, PlanRequest, SizeUnit};
    let problem = load_problem(&args.file)?;
    let out_dir = OutDir::open(args.out.as_ref())?;
    let until = args.until.unwrap_or(problem.t_end);
    let goal = match args.goal.as_str() {
        "pest-below" => Goal::PestBelowThreshold { by: args.by, until },
        _ => Goal::Persist {
            species: args.persist_species.unwrap_or(args.species),
            level: args.level,
            until,
            floor: match (args.floor_species, args.floor) {
                (Some(s), Some(f)) => Some((s, f)),
                (None, None) => None,
                _ => anyhow::bail!("--floor-species and --floor go together"),
            },
        },
    };
    let request = PlanRequest {
        goal,
        species: args.species,
        unit: if args.ratio {
            SizeUnit::RatioToOther
        } else {
            SizeUnit::Individuals
        },
        max_size: args.max,
        times: args.times.clone(),
        counts: args.counts.clone(),
        every: args.every,
        curve_points: args.curve_points,
    };
    let result = plan::plan(&problem, &request)?;
    if let Some(dir) = out_dir {
        dir.write(
            "release-plan.csv",
            &tussock_charts::tables::plan_csv(&result),
        )?;
        let (names, unit) = (&problem.species, &problem.time_unit);
        dir.figure(
            "release-response.svg",
            tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
                tussock_charts::draw_response_curves(root, &result, names, args.species, unit, 1.0)
            }),
        )?;
        dir.figure(
            "release-timing.svg",
            tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
                tussock_charts::draw_release_timing(root, &result, names, args.species, unit, 1.0)
            }),
        )?;
    }
    if args.json {
        println!(
            "{}",
            serde_json::to_string(&serde_json::json!({ "goal": request.goal, "plan": result }))?
        );
        return Ok(());
    }
    let names = &problem.species;
    let unit = &problem.time_unit;
    let size = |v: f64| {
        if args.ratio {
            format!(
                "{} per {} (1:{:.1})",
                analysis::round_sig(v, 4),
                names[1 - args.species.min(1)],
                1.0 / v
            )
        } else {
            format!("{} {}", analysis::round_sig(v, 4), names[args.species])
        }
    };
    println!("first release ({unit}) | releases | smallest per release | total | note");
    for row in &result.rows {
        let (smallest, total) = match (row.smallest, row.total) {
            (Some(s), Some(t)) => (size(s), analysis::round_sig(t, 4)),
            _ => (format!("none up to {}", size(args.max)), "–".to_string()),
        };
        let mut notes = Vec::new();
        if row.at_lower_bound {
            notes.push("the smallest size searched already works");
        }
        if row.non_monotone {
            notes.push("a larger release fails again: check the curve");
        }
        let note = notes.join("; ");
        println!(
            "{} | {} every {} | {smallest} | {total} | {note}",
            row.time, row.count, row.every
        );
    }
    match result.best.map(|i| &result.rows[i]) {
        Some(best) => println!(
            "Smallest total: {} release(s) from {} {unit} of {} each.",
            best.count,
            best.time,
            size(best.smallest.unwrap_or(f64::NAN))
        ),
        None => println!("No release in the searched range meets the goal."),
    }
    if args.ratio {
        println!("Release ratios of about 1:10 to 1:50 predator:prey are common practice for predatory mites (from memory; follow the supplier's label and local advice).");
    }
    Ok(())
}

fn models() -> Result<()> {
    for model in MODELS {
        println!("{} — {} ({})", model.key, model.title, model.group.label());
        println!("  state order: {}", model.species.join(", "));
        if let Some(choice) = model.choice {
            let options: Vec<String> = choice
                .options
                .iter()
                .map(|(k, label)| format!("{k} ({label})"))
                .collect();
            println!(
                "  {}: {}; default {}",
                choice.key,
                options.join(", "),
                choice.options[choice.default].0
            );
        }
        for p in model.params {
            let range = p.range_text();
            let default = if p.default.is_infinite() {
                "none".to_string()
            } else {
                p.default.to_string()
            };
            println!(
                "  {:<10} {} [{}; default {default}; {range}]{}: {}",
                p.symbol,
                p.name,
                p.unit.label("time unit"),
                if p.optional { ", optional" } else { "" },
                p.help
            );
        }
    }
    Ok(())
}
