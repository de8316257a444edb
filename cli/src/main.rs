//! `tussock`: the command-line twin of the workbench. Thin glue over
//! `tussock-core`; every message to the user is one line, and no input makes
//! it panic.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{Context, Result};
use clap::{Parser, Subcommand};
use tussock_core::models::MODELS;
use tussock_core::{solve, Scenario, Trajectory};

#[derive(Parser)]
#[command(
    name = "tussock",
    version,
    about = "Plan with two interacting populations: simulate scenario files from the command line."
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
    },
    /// List the models and their parameters.
    Models,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let outcome = match cli.command {
        Command::Run { file, json } => run(&file, json),
        Command::Models => models(),
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

fn run(file: &Path, json: bool) -> Result<()> {
    let scenario = load(file)?;
    let problem = scenario
        .validate()
        .with_context(|| file.display().to_string())?;
    let trajectory = solve(&problem);
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    if json {
        let value = trajectory_json(&trajectory, &problem.species, &problem.time_unit);
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

fn models() -> Result<()> {
    for model in MODELS {
        println!("{} — {} ({})", model.key, model.title, model.group.label());
        println!("  state order: {}", model.species.join(", "));
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
