//! `tussock fit`: fit a scenario's model to counts in a CSV file.

use std::path::{Path, PathBuf};

use anyhow::{bail, Context, Result};
use tussock_core::analysis::round_sig;
use tussock_core::data::{read_counts, ImportOptions, Imported};
use tussock_core::fit::{fit, FitRequest, FitResult, Objective};
use tussock_core::run::Run;
use tussock_core::Scenario;

use crate::out::{self, OutDir};
use tussock_charts::tables;

#[derive(clap::Args)]
pub struct FitArgs {
    /// Scenario file (JSON): the model, the fixed values and the starting values.
    file: PathBuf,
    /// Counts (CSV): a time column and one or two count columns named after the species.
    data: PathBuf,
    /// What to estimate, comma-separated: parameter symbols and init1/init2 (initial densities).
    #[arg(long, value_delimiter = ',', required = true)]
    estimate: Vec<String>,
    /// log-ls (least squares on ln(count+1), default), ls (on counts), poisson, negbin.
    #[arg(long, default_value = "log-ls")]
    objective: String,
    /// Search bounds, e.g. r=0.01:5,K=10:1e5 (default: the start ÷100 to ×100).
    #[arg(long, value_delimiter = ',', allow_hyphen_values = true)]
    bounds: Vec<String>,
    /// Number of starts (the scenario's values, then a Latin hypercube).
    #[arg(long, default_value_t = FitRequest::DEFAULT_STARTS)]
    starts: usize,
    /// Seed of the Latin hypercube.
    #[arg(long, default_value_t = 0)]
    seed: u64,
    /// Skip the profile-likelihood intervals (faster).
    #[arg(long)]
    no_profiles: bool,
    /// Write the scenario with the fitted values to this file.
    #[arg(long)]
    save: Option<PathBuf>,
    /// Write one JSON object instead of a table.
    #[arg(long)]
    json: bool,
    /// Also write fit-estimates.csv, fitted-trajectory.csv, fitted-vs-counts.svg
    /// and fit-residuals.svg into DIR, made if missing.
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
}

fn read_text(path: &Path) -> Result<String> {
    let bytes = std::fs::read(path).with_context(|| format!("cannot read {}", path.display()))?;
    String::from_utf8(bytes)
        .map_err(|_| anyhow::anyhow!("{}: not a text file (invalid UTF-8)", path.display()))
}

pub fn run(args: &FitArgs) -> Result<()> {
    let scenario = super::load(&args.file)?;
    let problem = scenario
        .validate()
        .with_context(|| args.file.display().to_string())?;
    let text = read_text(&args.data)?;
    let imported = read_counts(
        &text,
        &problem.species,
        &problem.time_unit,
        &ImportOptions::default(),
    )
    .with_context(|| args.data.display().to_string())?;

    let objective = Objective::from_key(&args.objective).ok_or_else(|| {
        anyhow::anyhow!(
            "--objective: unknown objective \"{}\" (choose log-ls, ls, poisson or negbin)",
            args.objective
        )
    })?;
    let mut bounds = tussock_cli::parse::bounds(&args.bounds)?;
    let names: Vec<&str> = args.estimate.iter().map(|s| s.trim()).collect();
    let mut request = FitRequest::new(&names);
    for spec in &mut request.estimate {
        if let Some((lo, hi)) = bounds.remove(&spec.name) {
            spec.lower = Some(lo);
            spec.upper = Some(hi);
        }
    }
    if let Some(name) = bounds.keys().next() {
        bail!("--bounds: {name} is not among the estimated (--estimate)");
    }
    request.objective = objective;
    request.starts = args.starts;
    request.seed = args.seed;
    request.profiles = !args.no_profiles;
    let fit_problem = request
        .validate(&problem, &imported.data)
        .with_context(|| args.data.display().to_string())?;
    let out_dir = OutDir::open(args.out.as_ref())?;
    let result = fit(&fit_problem, &mut |_, _| true);

    if let Some(path) = &args.save {
        let fitted = result.apply_to(&scenario);
        std::fs::write(path, fitted.to_json_pretty() + "\n")
            .with_context(|| format!("cannot write {}", path.display()))?;
    }
    if let Some(dir) = out_dir {
        write_files(&dir, &result, &scenario, &imported)?;
    }
    if args.json {
        println!(
            "{}",
            serde_json::to_string(&json(&result, &imported, problem.model.key))?
        );
    } else {
        print_table(args, &result, &imported, problem.model.title);
    }
    Ok(())
}

/// The estimates, the model with the fitted values against the counts, and
/// the residuals.
fn write_files(
    dir: &OutDir,
    result: &FitResult,
    scenario: &Scenario,
    imported: &Imported,
) -> Result<()> {
    dir.write("fit-estimates.csv", &tables::fit_csv(result))?;
    let fitted = result
        .apply_to(scenario)
        .validate()
        .context("the fitted values")?;
    let run = Run::compute(fitted, &[]);
    let (species, unit) = (&run.problem.species, &run.problem.time_unit);
    let trajectory = crate::trajectory_csv(&run.trajectory, species)?;
    dir.write("fitted-trajectory.csv", &trajectory)?;
    dir.figure(
        "fitted-vs-counts.svg",
        crate::time_series_svg(&run, Some(&imported.data)),
    )?;
    dir.figure(
        "fit-residuals.svg",
        tussock_charts::to_svg(out::WIDTH, out::HEIGHT, |root| {
            tussock_charts::draw_residuals(root, result, species, unit, 1.0)
        }),
    )
}

fn json(result: &FitResult, imported: &Imported, model: &str) -> serde_json::Value {
    let estimates: serde_json::Map<String, serde_json::Value> = result
        .estimates
        .iter()
        .map(|e| {
            (
                e.name.clone(),
                serde_json::json!({
                    "value": e.value,
                    "se": e.se,
                    "ci": e.ci,
                    "label": e.label,
                    "bounds": [e.lower, e.upper],
                    "start": e.start,
                    "at_bound": e.at_bound,
                    "profile": e.profile,
                }),
            )
        })
        .collect();
    let mut names: Vec<String> = result.estimates.iter().map(|e| e.name.clone()).collect();
    if let Some(d) = &result.dispersion {
        names.push(d.name.clone());
    }
    serde_json::json!({
        "model": model,
        "objective_kind": result.objective_kind,
        "estimates": estimates,
        "dispersion": result.dispersion.as_ref().map(|d| serde_json::json!({
            "value": d.value, "se": d.se, "ci": d.ci, "at_bound": d.at_bound,
        })),
        "sigma": result.sigma,
        "objective": result.objective,
        "log_likelihood": result.log_likelihood,
        "aic": result.aic,
        "aicc": result.aicc,
        "n_observations": result.n_observations,
        "n_estimated": result.n_estimated,
        "profile_threshold": result.profile_threshold,
        "correlations": {"names": names, "matrix": result.correlations},
        "warnings": result.warnings.iter().map(|w| w.message.clone()).collect::<Vec<_>>(),
        "warning_details": result.warnings,
        "residuals": result.residuals,
        "goodness": result.goodness,
        "starts": result.starts,
        "best_start": result.best_start,
        "stop": result.stop,
        "partial": result.partial,
        "evaluations": result.evaluations,
        "import": {
            "mapping": imported.mapping_text,
            "columns": imported.columns,
            "delimiter": imported.delimiter.to_string(),
            "decimal_comma": imported.decimal_comma,
            "rows": imported.n_rows,
            "missing": imported.n_missing,
            "blank_rows": imported.blank_rows,
        },
    })
}

fn num(v: f64) -> String {
    round_sig(v, 4)
}

fn print_table(args: &FitArgs, result: &FitResult, imported: &Imported, title: &str) {
    println!(
        "{title} fitted to {} ({} counts; {}).",
        args.data.display(),
        result.n_observations,
        result.objective_kind.label()
    );
    println!("Columns: {}.", imported.mapping_text);
    if imported.n_missing > 0 || !imported.blank_rows.is_empty() {
        println!(
            "{} missing count(s) left out; {} blank row(s) skipped.",
            imported.n_missing,
            imported.blank_rows.len()
        );
    }
    println!();
    println!(
        "{:<10} {:<32} {:>12} {:>12}  {:<28} bounds",
        "estimate", "", "value", "std. error", "95% interval (profile)"
    );
    let rows = result.estimates.iter().chain(result.dispersion.iter());
    for e in rows {
        let ci = match e.ci {
            [Some(lo), Some(hi)] => format!("{} to {}", num(lo), num(hi)),
            [Some(lo), None] => format!("{} to beyond the bound", num(lo)),
            [None, Some(hi)] => format!("below the bound to {}", num(hi)),
            [None, None] if e.profile.is_empty() && e.name != "k" => "not computed".into(),
            [None, None] => "not bounded by the data".into(),
        };
        let mut label = e.label.clone();
        if label.chars().count() > 32 {
            label = label.chars().take(31).collect::<String>() + "…";
        }
        println!(
            "{:<10} {:<32} {:>12} {:>12}  {:<28} {}:{}{}",
            e.name,
            label,
            num(e.value),
            e.se.map(num).unwrap_or_else(|| "–".into()),
            ci,
            e.lower,
            e.upper,
            if e.at_bound { " (at bound)" } else { "" }
        );
    }
    println!();
    let mut line = format!(
        "objective {}; log-likelihood {}; AIC {}; AICc {}",
        num(result.objective),
        num(result.log_likelihood),
        num(result.aic),
        result.aicc.map(num).unwrap_or_else(|| "–".into())
    );
    if let Some(s) = result.sigma {
        line += &format!("; residual sd {}", num(s));
    }
    println!("{line} ({} estimated quantities).", result.n_estimated);
    let names: Vec<&str> = result
        .estimates
        .iter()
        .chain(result.dispersion.iter())
        .map(|e| e.name.as_str())
        .collect();
    if names.len() > 1 && !result.correlations.is_empty() {
        println!("Correlations:");
        for (name, row) in names.iter().zip(&result.correlations) {
            let cells: Vec<String> = row
                .iter()
                .map(|c| c.map_or("  –  ".into(), |r| format!("{r:+.2}")))
                .collect();
            println!("  {name:<10} {}", cells.join(" "));
        }
    }
    let good = result
        .starts
        .iter()
        .filter(|s| s.objective.is_some())
        .count();
    println!(
        "Starts: {good} of {} fitted; best was start {}.",
        result.starts.len(),
        result
            .best_start
            .map_or("–".into(), |b| (b + 1).to_string())
    );
    if result.warnings.is_empty() {
        println!("No warnings.");
    } else {
        println!("Warnings:");
        for w in &result.warnings {
            println!("  - {}", w.message);
        }
    }
}
