//! Everything read off the optimum: information and standard errors,
//! correlations, likelihood and AIC, residual checks, warnings.

use nalgebra::DMatrix;
use statrs::distribution::{ChiSquared, ContinuousCDF, Normal, StudentsT};

use super::objective::{
    display_residual, information_weight, log_likelihood, negative_binomial_ln_pmf, scale,
    Objective,
};
use super::profile::{Profile, SideEnd};
use super::search::{Context, Refined};
use super::{
    DevianceCheck, Estimate, FitResult, FitStop, FitWarning, GoodnessOfFit, ResidualPoint,
    RunsTest, StartOutcome, WarningKind,
};

/// Correlations beyond this are reported (common practice).
const STRONG_CORRELATION: f64 = 0.95;
/// p-value below which a goodness-of-fit check warns (common practice).
const POOR_FIT_P: f64 = 0.05;
/// Runs tests need this many residuals of a species.
const MIN_RUNS_POINTS: usize = 8;

/// Number of quantities estimated besides the model's (σ² or k).
fn extra_quantities(objective: Objective) -> usize {
    match objective {
        Objective::Poisson => 0,
        _ => 1,
    }
}

/// Residual variance s² = S/(n − p) of least-squares fits.
fn residual_variance(context: &Context, objective_value: f64) -> f64 {
    let n = context.counts.len();
    let p = context.n_unknowns();
    objective_value / (n.saturating_sub(p).max(1)) as f64
}

/// The profile statistic at objective `s` relative to the optimum `best`.
pub(super) fn profile_statistic(context: &Context, best: f64, s: f64) -> f64 {
    if context.fit.objective.is_least_squares() {
        (s - best) / residual_variance(context, best).max(f64::MIN_POSITIVE)
    } else {
        s - best
    }
}

/// The 95% threshold of the profile statistic: t²(n − p, 0.975) for least
/// squares (Bates & Watts 1988, §6.1), χ²₁(0.95) otherwise (Raue et al.
/// 2009).
pub(super) fn profile_threshold(context: &Context) -> f64 {
    if context.fit.objective.is_least_squares() {
        let df = context
            .counts
            .len()
            .saturating_sub(context.n_unknowns())
            .max(1) as f64;
        StudentsT::new(0.0, 1.0, df)
            .map(|t| t.inverse_cdf(0.975).powi(2))
            .unwrap_or(3.841_458_820_694_124)
    } else {
        ChiSquared::new(1.0)
            .map(|c| c.inverse_cdf(0.95))
            .unwrap_or(3.841_458_820_694_124)
    }
}

/// Covariance of the unknowns (natural scale) and, for negbin, ln k last,
/// from the inverse Fisher information. None when singular.
fn covariance(context: &Context, optimum: &Refined, predictions: &[f64]) -> Option<DMatrix<f64>> {
    let fit = context.fit;
    let objective = fit.objective;
    let p = context.n_unknowns();
    let m = context.counts.len();
    let values = context.values(&optimum.w);
    let k = context.dispersion(&optimum.w);
    // Sensitivities of g(μ) by central differences (one-sided at a bound).
    let mut sens = DMatrix::<f64>::zeros(m, p);
    for j in 0..p {
        let u = &fit.unknowns[j];
        let v = values[j];
        let h = 1e-4 * v.abs().max(1e-3 * (u.upper - u.lower));
        let (lo, hi) = if v + h > u.upper {
            (v - h, v)
        } else if v - h < u.lower {
            (v, v + h)
        } else {
            (v - h, v + h)
        };
        let at = |x: f64| {
            let mut moved = values.clone();
            moved[j] = x;
            context.predict_values(&moved).ok()
        };
        let (plo, phi) = (at(lo)?, at(hi)?);
        for i in 0..m {
            sens[(i, j)] = (scale(objective, phi[i]) - scale(objective, plo[i])) / (hi - lo);
        }
    }
    let sigma2 = residual_variance(context, optimum.objective);
    let extra = usize::from(objective == Objective::NegativeBinomial);
    let mut info = DMatrix::<f64>::zeros(p + extra, p + extra);
    for i in 0..m {
        let weight = information_weight(objective, predictions[i], sigma2, k);
        for a in 0..p {
            for b in 0..p {
                info[(a, b)] += weight * sens[(i, a)] * sens[(i, b)];
            }
        }
    }
    if extra == 1 {
        // Observed information of ln k with the means fixed; the means and
        // k are orthogonal (Lawless 1987), so the cross terms are zero.
        let ell = |lnk: f64| -> f64 {
            context
                .counts
                .iter()
                .zip(predictions)
                .map(|(&y, &mu)| negative_binomial_ln_pmf(y, mu, lnk.exp()))
                .sum()
        };
        let (x, h) = (k.ln(), 1e-3);
        let second = (ell(x + h) - 2.0 * ell(x) + ell(x - h)) / (h * h);
        info[(p, p)] = -second;
    }
    let cov = info.try_inverse()?;
    let ok = (0..p + extra).all(|i| cov[(i, i)].is_finite() && cov[(i, i)] > 0.0);
    ok.then_some(cov)
}

/// Standard errors on the search scale (ln for log-scaled unknowns), used
/// to size the first profile steps.
pub(super) fn search_scale_errors(context: &Context, optimum: &Refined) -> Vec<Option<f64>> {
    let p = context.n_unknowns();
    let Ok(e) = context.evaluate(&optimum.w) else {
        return vec![None; p];
    };
    let Some(cov) = covariance(context, optimum, &e.predictions) else {
        return vec![None; p];
    };
    (0..p)
        .map(|j| {
            let se = cov[(j, j)].sqrt();
            let c = context.coordinates[j];
            Some(if c.log_scale {
                se / c.natural(optimum.w[j])
            } else {
                se
            })
        })
        .collect()
}

fn normal_cdf(z: f64) -> f64 {
    Normal::new(0.0, 1.0).map(|n| n.cdf(z)).unwrap_or(0.5)
}

/// Wald–Wolfowitz runs test on residual signs (zeros skipped), one-sided
/// for too few runs, normal approximation.
fn runs_test(species: usize, residuals: &[f64]) -> Option<RunsTest> {
    let signs: Vec<bool> = residuals
        .iter()
        .filter(|r| **r != 0.0)
        .map(|r| *r > 0.0)
        .collect();
    if signs.len() < MIN_RUNS_POINTS {
        return None;
    }
    let n1 = signs.iter().filter(|s| **s).count() as f64;
    let n2 = signs.len() as f64 - n1;
    if n1 == 0.0 || n2 == 0.0 {
        return Some(RunsTest {
            species,
            runs: 1,
            expected: 1.0,
            p_value: 0.5f64.powf(signs.len() as f64 - 1.0),
        });
    }
    let runs = 1 + signs.windows(2).filter(|w| w[0] != w[1]).count();
    let n = n1 + n2;
    let expected = 2.0 * n1 * n2 / n + 1.0;
    let variance = 2.0 * n1 * n2 * (2.0 * n1 * n2 - n) / (n * n * (n - 1.0));
    let p_value = if variance > 0.0 {
        normal_cdf((runs as f64 - expected) / variance.sqrt())
    } else {
        1.0
    };
    Some(RunsTest {
        species,
        runs,
        expected,
        p_value,
    })
}

fn warn(kind: WarningKind, parameter: Option<&str>, message: String) -> FitWarning {
    FitWarning {
        kind,
        parameter: parameter.map(str::to_string),
        message,
    }
}

fn round(v: f64) -> String {
    crate::analysis::round_sig(v, 4)
}

/// The result when no start produced a fit.
pub(super) fn no_fit(
    context: &Context,
    starts: Vec<StartOutcome>,
    mut warnings: Vec<FitWarning>,
    cancelled: bool,
) -> FitResult {
    let fit = context.fit;
    warnings.push(warn(
        WarningKind::StartsFailed,
        None,
        "no start could be fitted: the model could not be integrated at any starting point; check the bounds and the scenario".into(),
    ));
    FitResult {
        stop: if cancelled {
            FitStop::Cancelled
        } else {
            FitStop::NoFit
        },
        partial: true,
        objective_kind: fit.objective,
        estimates: fit
            .unknowns
            .iter()
            .map(|u| Estimate {
                name: u.name.clone(),
                label: u.label.clone(),
                target: Some(u.target.clone()),
                value: u.start,
                se: None,
                ci: [None, None],
                lower: u.lower,
                upper: u.upper,
                start: u.start,
                log_scale: u.log_scale,
                at_bound: false,
                profile: Vec::new(),
            })
            .collect(),
        dispersion: None,
        sigma: None,
        objective: f64::MAX,
        log_likelihood: f64::MIN,
        n_observations: context.counts.len(),
        n_estimated: fit.unknowns.len() + extra_quantities(fit.objective),
        aic: f64::MAX,
        aicc: None,
        profile_threshold: profile_threshold(context),
        correlations: Vec::new(),
        residuals: Vec::new(),
        goodness: GoodnessOfFit::default(),
        starts,
        best_start: None,
        warnings,
        evaluations: context.evaluations.get(),
    }
}

/// Read everything off the optimum.
pub(super) fn assemble(
    context: &Context,
    optimum: &Refined,
    profiles: Vec<Profile>,
    starts: Vec<StartOutcome>,
    best_start: Option<usize>,
    mut warnings: Vec<FitWarning>,
    stop: FitStop,
) -> FitResult {
    let fit = context.fit;
    let objective = fit.objective;
    let evaluation = match context.evaluate(&optimum.w) {
        Ok(e) => e,
        Err(_) => return no_fit(context, starts, warnings, stop == FitStop::Cancelled),
    };
    let n = context.counts.len();
    let p = context.n_unknowns();
    let values = context.values(&optimum.w);
    let k = context.dispersion(&optimum.w);
    let s = evaluation.objective;
    let n_estimated = p + extra_quantities(objective);
    let ll = log_likelihood(objective, &context.counts, &evaluation.predictions, s, k);
    let aic = -2.0 * ll + 2.0 * n_estimated as f64;
    let denominator = n as f64 - n_estimated as f64 - 1.0;
    let aicc = (denominator > 0.0)
        .then(|| aic + 2.0 * (n_estimated * (n_estimated + 1)) as f64 / denominator);
    let threshold = profile_threshold(context);

    let cov = covariance(context, optimum, &evaluation.predictions);
    if cov.is_none() {
        warnings.push(warn(
            WarningKind::SingularInformation,
            None,
            "the information matrix is singular: some estimates (or combinations of them) are not determined by the data; no standard errors".into(),
        ));
    }
    let dim = p + usize::from(objective == Objective::NegativeBinomial);
    let correlations: Vec<Vec<Option<f64>>> = (0..dim)
        .map(|a| {
            (0..dim)
                .map(|b| {
                    cov.as_ref().and_then(|c| {
                        let r = c[(a, b)] / (c[(a, a)] * c[(b, b)]).sqrt();
                        r.is_finite().then_some(r.clamp(-1.0, 1.0))
                    })
                })
                .collect()
        })
        .collect();

    let mut estimates = Vec::with_capacity(p);
    for (j, u) in fit.unknowns.iter().enumerate() {
        let c = context.coordinates[j];
        let at_bound = (optimum.w[j] - c.lower).abs() <= 1e-4 * c.range()
            || (c.upper - optimum.w[j]).abs() <= 1e-4 * c.range();
        if at_bound {
            warnings.push(warn(
                WarningKind::EstimateAtBound,
                Some(&u.name),
                format!(
                    "{}: the estimate {} sits at a bound ({}:{}); widen the bounds or treat it as \"at least\"/\"at most\"",
                    u.name,
                    round(values[j]),
                    u.lower,
                    u.upper
                ),
            ));
        }
        let se = cov.as_ref().map(|c| c[(j, j)].sqrt());
        let mut ci = [None, None];
        let mut points = Vec::new();
        if let Some(profile) = profiles.get(j) {
            points = profile.points.clone();
            let sides = [&profile.lower, &profile.upper];
            for (side, end) in sides.iter().enumerate() {
                if let Some(SideEnd::Closed(v)) = end {
                    ci[side] = Some(*v);
                }
            }
            let open = |e: &Option<SideEnd>| matches!(e, Some(SideEnd::OpenAtBound { .. }));
            let peak = points.iter().map(|q| q.statistic).fold(0.0_f64, f64::max);
            if open(&profile.lower) && open(&profile.upper) && peak < 0.1 * threshold {
                warnings.push(warn(
                    WarningKind::NotIdentifiable,
                    Some(&u.name),
                    format!(
                        "{}: not identifiable: its profile is flat over {}:{} (the fit changes by at most {:.3} of the {:.2} needed), so the data say almost nothing about it; fix it at a known value or add data that depend on it",
                        u.name, u.lower, u.upper, peak, threshold
                    ),
                ));
            } else {
                for (end, which, bound) in [
                    (&profile.lower, "lower", u.lower),
                    (&profile.upper, "upper", u.upper),
                ] {
                    match end {
                        Some(SideEnd::OpenAtBound { .. }) => warnings.push(warn(
                            WarningKind::IntervalReachesBound,
                            Some(&u.name),
                            format!(
                                "{}: the 95% interval reaches its {which} bound ({bound}): the data do not rule out values beyond it (only practically identifiable)",
                                u.name
                            ),
                        )),
                        Some(SideEnd::Failed { message, last }) => warnings.push(warn(
                            WarningKind::IntervalReachesBound,
                            Some(&u.name),
                            format!(
                                "{}: the {which} side of the interval is unknown: the model could not be integrated beyond {} ({message})",
                                u.name,
                                round(*last)
                            ),
                        )),
                        Some(SideEnd::StepLimit { last }) => warnings.push(warn(
                            WarningKind::IntervalReachesBound,
                            Some(&u.name),
                            format!(
                                "{}: the {which} side of the interval was not found within {} steps (last tried {})",
                                u.name, 40, round(*last)
                            ),
                        )),
                        _ => {}
                    }
                }
            }
        }
        estimates.push(super::Estimate {
            name: u.name.clone(),
            label: u.label.clone(),
            target: Some(u.target.clone()),
            value: values[j],
            se,
            ci,
            lower: u.lower,
            upper: u.upper,
            start: u.start,
            log_scale: u.log_scale,
            at_bound,
            profile: points,
        });
    }

    for a in 0..p {
        for b in a + 1..p {
            if let Some(Some(r)) = correlations.get(a).and_then(|row| row.get(b)) {
                if r.abs() > STRONG_CORRELATION {
                    warnings.push(warn(
                        WarningKind::StrongCorrelation,
                        None,
                        format!(
                            "{} and {} are strongly correlated (r = {:.3}): the data pin down a combination of them better than each alone",
                            fit.unknowns[a].name, fit.unknowns[b].name, r
                        ),
                    ));
                }
            }
        }
    }

    let dispersion = (objective == Objective::NegativeBinomial).then(|| {
        let (lo, hi) = fit.options.dispersion_bounds;
        let se_ln = cov.as_ref().map(|c| c[(p, p)].sqrt());
        let c = context.coordinates[p];
        let at_bound = (optimum.w[p] - c.lower).abs() <= 1e-4 * c.range()
            || (c.upper - optimum.w[p]).abs() <= 1e-4 * c.range();
        if (c.upper - optimum.w[p]).abs() <= 1e-2 * c.range() {
            warnings.push(warn(
                WarningKind::NoOverdispersion,
                Some("k"),
                format!(
                    "the negative-binomial size k went to its upper bound ({hi}): the counts show no overdispersion; the Poisson objective fits as well with one parameter fewer"
                ),
            ));
        }
        Estimate {
            name: "k".into(),
            label: "negative-binomial size (variance μ + μ²/k)".into(),
            target: None,
            value: k,
            se: se_ln.map(|s| s * k),
            ci: match se_ln {
                Some(s) => [Some((k.ln() - 1.96 * s).exp()), Some((k.ln() + 1.96 * s).exp())],
                None => [None, None],
            },
            lower: lo,
            upper: hi,
            start: fit.options.dispersion_start,
            log_scale: true,
            at_bound,
            profile: Vec::new(),
        }
    });

    let residuals: Vec<ResidualPoint> = fit
        .observations
        .iter()
        .zip(&evaluation.predictions)
        .map(|(o, &mu)| ResidualPoint {
            time: fit.data.times[o.time_index],
            species: o.species,
            observed: o.count,
            predicted: mu,
            residual: display_residual(objective, o.count, mu, k),
        })
        .collect();

    let mut goodness = GoodnessOfFit::default();
    for series in &fit.data.series {
        let r: Vec<f64> = residuals
            .iter()
            .filter(|q| q.species == series.species)
            .map(|q| q.residual)
            .collect();
        if let Some(test) = runs_test(series.species, &r) {
            if test.p_value < POOR_FIT_P {
                let name = fit
                    .problem
                    .species
                    .get(series.species)
                    .cloned()
                    .unwrap_or_default();
                warnings.push(warn(
                    WarningKind::PoorFit,
                    None,
                    format!(
                        "poor fit: the residuals of {name} run in streaks ({} runs of signs where about {:.1} are expected; runs test p = {:.3}): the model misses a pattern in the data",
                        test.runs, test.expected, test.p_value
                    ),
                ));
            }
            goodness.runs.push(test);
        }
    }
    if objective == Objective::Poisson {
        let df = n.saturating_sub(p);
        if df > 0 {
            let p_value = ChiSquared::new(df as f64)
                .map(|c| 1.0 - c.cdf(s))
                .unwrap_or(1.0);
            if p_value < POOR_FIT_P {
                warnings.push(warn(
                    WarningKind::PoorFit,
                    None,
                    format!(
                        "poor fit: the counts vary more than a Poisson model allows (deviance {:.1} on {df} degrees of freedom, p = {:.3}); try the negative-binomial objective",
                        s, p_value
                    ),
                ));
            }
            goodness.deviance = Some(DevianceCheck {
                deviance: s,
                degrees_of_freedom: df,
                p_value,
            });
        }
    }
    if matches!(objective, Objective::Poisson | Objective::NegativeBinomial)
        && context.counts.iter().any(|y| y.fract() != 0.0)
    {
        warnings.push(warn(
            WarningKind::NonIntegerCounts,
            None,
            format!(
                "some counts are not whole numbers; the {} treats them as counts (densities per area or volume suit least squares better)",
                objective.label()
            ),
        ));
    }

    FitResult {
        stop,
        partial: stop != FitStop::Finished,
        objective_kind: objective,
        estimates,
        dispersion,
        sigma: objective
            .is_least_squares()
            .then(|| residual_variance(context, s).sqrt()),
        objective: s,
        log_likelihood: ll,
        n_observations: n,
        n_estimated,
        aic,
        aicc,
        profile_threshold: threshold,
        correlations,
        residuals,
        goodness,
        starts,
        best_start,
        warnings,
        evaluations: context.evaluations.get(),
    }
}
