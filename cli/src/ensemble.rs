//! `tussock ensemble` and `tussock founders`: stochastic ensembles from the
//! command line, run in parallel over the machine's cores (rayon). Every
//! run draws from its own generator of (seed, run index), so the output is
//! the same for any number of threads.

use std::path::PathBuf;

use anyhow::{bail, Result};

use crate::out::{self, OutDir};
use rayon::prelude::*;
use tussock_charts::tables;
use tussock_core::analysis::round_sig;
use tussock_core::stochastic::{
    Ensemble, EnsembleOptions, EnsembleSummary, EnvironmentalNoise, EstablishmentPlan,
    EstablishmentRequest, EstablishmentTable, Method, StochasticOptions,
};

/// How each run is simulated: shared by both subcommands.
#[derive(clap::Args)]
pub struct RunArgs {
    /// Number of runs (per row for founders).
    #[arg(long, default_value_t = 1000)]
    runs: u64,
    /// Master seed: the same seed gives the same result.
    #[arg(long, default_value_t = 0)]
    seed: u64,
    /// exact (one event at a time), tau-leap, or auto (exact while
    /// populations are small, leaps when they are large).
    #[arg(long, default_value = "auto", value_parser = ["auto", "exact", "tau-leap"])]
    method: String,
    /// Environmental noise: standard deviation of the log multiplier of
    /// birth rates, redrawn every time unit.
    #[arg(long, allow_negative_numbers = true)]
    noise: Option<f64>,
    /// Correlation of the noise from one time unit to the next (with --noise).
    #[arg(long, allow_negative_numbers = true)]
    autocorrelation: Option<f64>,
    /// Most events and leaps in one run before it stops.
    #[arg(long, default_value_t = 10_000_000)]
    max_steps: u64,
    /// Threads to use (0: one per core). The result does not depend on it.
    #[arg(long, default_value_t = 0)]
    threads: usize,
    /// Write one JSON object instead of a table.
    #[arg(long)]
    json: bool,
}

#[derive(clap::Args)]
pub struct EnsembleArgs {
    /// Scenario file (JSON).
    file: PathBuf,
    #[command(flatten)]
    run: RunArgs,
    /// Individual runs included in the JSON output.
    #[arg(long, default_value_t = 5)]
    keep: usize,
    /// Day D for the probability that the pest is under its economic
    /// threshold (default: the horizon; needs the threshold in the scenario).
    #[arg(long, allow_negative_numbers = true)]
    pest_day: Option<f64>,
    /// Quasi-extinction level per species, comma-separated, "none" for no
    /// level (default: the scenario's thresholds).
    #[arg(long, value_delimiter = ',')]
    quasi_extinction: Option<Vec<String>>,
    /// Most intervals of the summary's time grid.
    #[arg(long, default_value_t = 200)]
    intervals: usize,
    /// Also write ensemble-summary.csv, a fan-SPECIES.svg per species and
    /// extinction.svg into DIR, made if missing.
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
}

#[derive(clap::Args)]
pub struct FoundersArgs {
    /// Scenario file (JSON).
    file: PathBuf,
    #[command(flatten)]
    run: RunArgs,
    /// Index of the species released (default 1, the predator).
    #[arg(long, default_value_t = 1)]
    species: usize,
    /// Total numbers of founders to compare, comma-separated.
    #[arg(long, value_delimiter = ',', required = true)]
    founders: Vec<u64>,
    /// Numbers of releases to split them into, comma-separated.
    #[arg(long, value_delimiter = ',', default_value = "1")]
    releases: Vec<u32>,
    /// Time of the first release.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    first: f64,
    /// Time between releases.
    #[arg(long, default_value_t = 1.0, allow_negative_numbers = true)]
    every: f64,
    /// Established: at least this many individuals at the horizon.
    #[arg(long, default_value_t = 1.0, allow_negative_numbers = true)]
    level: f64,
    /// The horizon (default: the scenario's t_end).
    #[arg(long, allow_negative_numbers = true)]
    horizon: Option<f64>,
    /// Also write founders.csv and establishment.svg into DIR, made if missing.
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
}

impl RunArgs {
    fn simulation(&self) -> Result<StochasticOptions> {
        let method = match self.method.as_str() {
            "exact" => Method::Exact,
            "tau-leap" => Method::TauLeap,
            _ => Method::Auto,
        };
        let noise = match (self.noise, self.autocorrelation) {
            (None, Some(_)) => bail!("--autocorrelation needs --noise"),
            (None, None) => None,
            (Some(sd), rho) => Some(EnvironmentalNoise {
                sd,
                autocorrelation: rho.unwrap_or(0.0),
            }),
        };
        Ok(StochasticOptions {
            method,
            noise,
            max_steps: self.max_steps,
            ..StochasticOptions::default()
        })
    }

    /// Run `work` in a pool of the requested size.
    fn in_pool<T: Send>(&self, work: impl FnOnce() -> T + Send) -> Result<T> {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(self.threads)
            .build()?;
        Ok(pool.install(work))
    }
}

pub fn ensemble(args: &EnsembleArgs) -> Result<()> {
    let problem = crate::load_problem(&args.file)?;
    let out_dir = OutDir::open(args.out.as_ref())?;
    let options = EnsembleOptions {
        runs: args.run.runs,
        seed: args.run.seed,
        simulation: args.run.simulation()?,
        keep_runs: args.keep,
        max_intervals: args.intervals,
        pest_day: args.pest_day,
        quasi_extinction: tussock_cli::parse::quasi_levels(&args.quasi_extinction)?,
        ..EnsembleOptions::default()
    };
    let ensemble = Ensemble::new(&problem, &options)?;
    let summary = args
        .run
        .in_pool(|| tussock_cli::parallel::ensemble(&ensemble, options.runs).summary())?;
    if let Some(dir) = out_dir {
        write_ensemble_files(&dir, &summary)?;
    }
    if args.run.json {
        println!("{}", serde_json::to_string(&summary)?);
    } else {
        print_summary(&summary, problem.model.title);
    }
    Ok(())
}

/// The summary by time, a fan chart per species and the extinction chart.
fn write_ensemble_files(dir: &OutDir, summary: &EnsembleSummary) -> Result<()> {
    dir.write("ensemble-summary.csv", &tables::ensemble_csv(summary))?;
    for (i, stem) in out::species_stems(&summary.species).iter().enumerate() {
        dir.figure(
            &format!("fan-{stem}.svg"),
            tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
                tussock_charts::draw_fan(root, summary, i, 1.0)
            }),
        )?;
    }
    dir.figure(
        "extinction.svg",
        tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
            tussock_charts::draw_extinction_curves(root, summary, 1.0)
        }),
    )
}

fn percent(p: Option<f64>) -> String {
    p.map_or("–".to_string(), |p| format!("{:.1}%", 100.0 * p))
}

fn interval(ci: Option<[f64; 2]>) -> String {
    ci.map_or("–".to_string(), |[lo, hi]| {
        format!("{:.1}–{:.1}%", 100.0 * lo, 100.0 * hi)
    })
}

fn number(v: f64) -> String {
    round_sig(v, 4)
}

fn method_name(method: Method) -> &'static str {
    match method {
        Method::Auto => "auto",
        Method::Exact => "exact",
        Method::TauLeap => "tau-leap",
    }
}

fn print_summary(s: &EnsembleSummary, title: &str) {
    let unit = &s.time_unit;
    let width = s
        .species
        .iter()
        .map(|n| n.chars().count())
        .max()
        .unwrap_or(7)
        .max(7);
    println!(
        "{title}: {} runs, seed {}, method {} ({} exact events, {} leaps)",
        s.runs,
        s.seed,
        method_name(s.method),
        s.steps.exact_events,
        s.steps.leaps
    );
    let has_quasi = !s.quasi_extinction.is_empty();
    print!(
        "{:<width$}  {:>12}  {:>12}",
        format!("By {} {unit}", number(s.horizon)),
        "extinct",
        "95% interval"
    );
    if has_quasi {
        print!("  {:>22}  {:>12}", "quasi-extinct", "95% interval");
    }
    println!();
    for e in &s.extinction {
        print!(
            "{:<width$}  {:>12}  {:>12}",
            e.species,
            format!("{} ({})", percent(e.probability), e.count),
            interval(e.ci)
        );
        if let Some(q) = s.quasi_extinction.iter().find(|q| q.species == e.species) {
            print!(
                "  {:>22}  {:>12}",
                format!(
                    "{} ({}) < {}",
                    percent(q.probability),
                    q.count,
                    number(q.level)
                ),
                interval(q.ci)
            );
        }
        println!();
    }
    let extinct: Vec<_> = s
        .time_to_extinction
        .species
        .iter()
        .filter(|t| t.extinct_runs > 0)
        .collect();
    if !extinct.is_empty() {
        println!("Time to extinction, over the runs where it happened:");
        for t in extinct {
            if let Some([p05, p25, median, p75, p95]) = t.quantiles.as_deref() {
                println!(
                    "  {}: median {} {unit}; 50% between {} and {}; 90% between {} and {} ({} runs)",
                    t.species,
                    number(*median),
                    number(*p25),
                    number(*p75),
                    number(*p05),
                    number(*p95),
                    t.extinct_runs
                );
            }
        }
    }
    if let Some(p) = &s.pest_below_threshold {
        println!(
            "{} under its economic threshold ({}) at {} {unit}: {} (95% interval {})",
            p.species,
            number(p.threshold),
            number(p.day),
            percent(p.probability),
            interval(p.ci)
        );
    }
    let last = s.times.len().saturating_sub(1);
    println!(
        "{:<width$}  {:>8}  {:>18}  {:>18}  {:>13}",
        format!("At {} {unit}", number(s.horizon)),
        "median",
        "50% of runs",
        "90% of runs",
        "deterministic"
    );
    for (i, f) in s.fan.iter().enumerate() {
        let at = |v: &Vec<f64>| v.get(last).map_or("–".to_string(), |x| number(*x));
        let band = |lo: &Vec<f64>, hi: &Vec<f64>| format!("{} to {}", at(lo), at(hi));
        let det = s
            .deterministic
            .states
            .get(i)
            .and_then(|d| d.get(last))
            .map_or("–".to_string(), |x| number(*x));
        println!(
            "{:<width$}  {:>8}  {:>18}  {:>18}  {:>13}",
            f.species,
            at(&f.median),
            band(&f.p25, &f.p75),
            band(&f.p05, &f.p95),
            det
        );
    }
    let stopped = s.simulated - s.runs;
    if stopped > 0 {
        let first = s
            .failures
            .first()
            .map(|f| f.stop.describe(&s.species, unit))
            .unwrap_or_default();
        println!(
            "{stopped} runs stopped early and are left out above ({} too many events, {} blew up, {} undefined rates); e.g. {first}",
            s.stops.too_many_steps, s.stops.blew_up, s.stops.non_finite
        );
    }
}

pub fn founders(args: &FoundersArgs) -> Result<()> {
    let problem = crate::load_problem(&args.file)?;
    let out_dir = OutDir::open(args.out.as_ref())?;
    let request = EstablishmentRequest {
        species: args.species,
        founders: args.founders.clone(),
        releases: args.releases.clone(),
        first_release: args.first,
        every: args.every,
        level: args.level,
        horizon: args.horizon,
        runs: args.run.runs,
        seed: args.run.seed,
        simulation: args.run.simulation()?,
    };
    let plan = EstablishmentPlan::new(&problem, &request)?;
    let table = args.run.in_pool(|| {
        let tallies: Vec<_> = (0..plan.rows())
            .map(|row| {
                tussock_cli::parallel::chunks(request.runs, rayon::current_num_threads())
                    .into_par_iter()
                    .map(|(start, end)| {
                        let mut tally = plan.tally(row);
                        plan.run_chunk(&mut tally, start..end, &mut |_, _| true);
                        tally
                    })
                    .reduce(
                        || plan.tally(row),
                        |mut a, b| {
                            // Tallies of one row made by one plan always fit.
                            let _ = a.merge(b);
                            a
                        },
                    )
            })
            .collect();
        plan.table(&tallies)
    })?;
    if let Some(dir) = out_dir {
        dir.write("founders.csv", &tables::founders_csv(&table))?;
        dir.figure(
            "establishment.svg",
            tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
                tussock_charts::draw_establishment(root, &table, 1.0)
            }),
        )?;
    }
    if args.run.json {
        println!("{}", serde_json::to_string(&table)?);
    } else {
        print_founders(&table);
    }
    Ok(())
}

fn print_founders(t: &EstablishmentTable) {
    let unit = &t.time_unit;
    println!(
        "{} established (at least {} at {} {unit}): {} runs per row, seed {}, method {}",
        t.species,
        number(t.level),
        number(t.horizon),
        t.runs,
        t.seed,
        method_name(t.method)
    );
    let other_name = t
        .rows
        .first()
        .and_then(|r| r.other.as_ref())
        .map(|o| o.species.clone());
    print!(
        "{:>8}  {:>16}  {:>10}  {:>14}  {:>14}",
        "founders", "releases", "established", "95% interval", "median at end"
    );
    if let Some(name) = &other_name {
        print!("  {name}: median (90% of runs), extinct");
    }
    println!();
    for r in &t.rows {
        let sizes: Vec<String> = r.release_sizes.iter().map(|s| s.to_string()).collect();
        let median = r
            .at_horizon
            .as_ref()
            .map_or("–".to_string(), |q| number(q[1]));
        print!(
            "{:>8}  {:>16}  {:>10}  {:>14}  {:>14}",
            r.founders,
            sizes.join("+"),
            percent(r.probability),
            interval(r.ci),
            median
        );
        if let Some(o) = &r.other {
            let spread = o.at_horizon.as_ref().map_or("–".to_string(), |q| {
                format!("{} ({} to {})", number(q[1]), number(q[0]), number(q[2]))
            });
            print!("  {spread}, {}", percent(o.extinction));
        }
        let stopped = r.simulated - r.runs;
        if stopped > 0 {
            print!("  ({stopped} runs stopped early, left out)");
        }
        println!();
    }
    if let Some(first) = t.rows.first() {
        if first.releases > 1 || t.rows.iter().any(|r| r.releases > 1) {
            let every = t
                .rows
                .iter()
                .find(|r| r.release_times.len() > 1)
                .map(|r| r.release_times[1] - r.release_times[0]);
            if let Some(every) = every {
                println!(
                    "Releases are {} {unit} apart from {} {unit}.",
                    number(every),
                    number(first.release_times[0])
                );
            }
        }
    }
}
