//! Profile likelihoods (Raue et al. 2009, Bioinformatics 25:1923): each
//! estimate is fixed at values stepping away from its optimum, the others
//! are re-fitted, and the interval ends where the statistic crosses its
//! threshold (see `fit` for the statistic). Steps adapt to the profile's
//! rise (doubling while it rises slowly, halving when fast); the crossing is
//! located by the Illinois method on the square root of the statistic,
//! which is close to linear near the optimum.

use super::search::{refine, Context, Refined};
use super::stats;
use super::ProfilePoint;

/// Most steps on one side before giving up.
const MAX_STEPS: usize = 40;
/// A profile point this far (in statistic units) below the optimum means
/// the search missed the best fit.
const BETTER_BY: f64 = 1e-3;

/// How one side of a profile ended.
#[derive(Clone, Debug, PartialEq)]
pub(super) enum SideEnd {
    /// The statistic crossed its threshold here (natural scale).
    Closed(f64),
    /// The bound was reached with the statistic still below the threshold.
    OpenAtBound { statistic: f64 },
    /// The solver failed while stepping out.
    Failed { message: String, last: f64 },
    /// No crossing within the step budget.
    StepLimit { last: f64 },
}

/// The profile of one estimate.
#[derive(Clone, Debug)]
pub(super) struct Profile {
    pub points: Vec<ProfilePoint>,
    pub lower: Option<SideEnd>,
    pub upper: Option<SideEnd>,
}

pub(super) struct ProfilesOutcome {
    pub profiles: Vec<Profile>,
    /// The best point found below the optimum, if any.
    pub better: Option<Refined>,
    pub cancelled: bool,
}

/// Profiles of every unknown; `side_done(1)` is called after each side and
/// returning false stops.
pub(super) fn profile_all(
    context: &Context,
    optimum: &Refined,
    side_done: &mut dyn FnMut(usize) -> bool,
) -> ProfilesOutcome {
    let threshold = stats::profile_threshold(context);
    let se_w = stats::search_scale_errors(context, optimum);
    let mut out = ProfilesOutcome {
        profiles: Vec::new(),
        better: None,
        cancelled: false,
    };
    for j in 0..context.n_unknowns() {
        let mut profile = Profile {
            points: vec![ProfilePoint {
                value: context.coordinates[j].natural(optimum.w[j]),
                statistic: 0.0,
            }],
            lower: None,
            upper: None,
        };
        for direction in [-1.0, 1.0] {
            if out.cancelled {
                break;
            }
            let end = side(
                context,
                optimum,
                j,
                direction,
                se_w.get(j).copied().flatten(),
                threshold,
                &mut profile.points,
                &mut out.better,
            );
            if direction < 0.0 {
                profile.lower = Some(end);
            } else {
                profile.upper = Some(end);
            }
            if !side_done(1) {
                out.cancelled = true;
            }
        }
        profile.points.sort_by(|a, b| a.value.total_cmp(&b.value));
        out.profiles.push(profile);
    }
    out
}

#[allow(clippy::too_many_arguments)]
fn side(
    context: &Context,
    optimum: &Refined,
    j: usize,
    direction: f64,
    se_w: Option<f64>,
    threshold: f64,
    points: &mut Vec<ProfilePoint>,
    better: &mut Option<Refined>,
) -> SideEnd {
    let coordinate = context.coordinates[j];
    let range = coordinate.range();
    let free: Vec<usize> = (0..context.coordinates.len()).filter(|&i| i != j).collect();
    let statistic = |s: f64| stats::profile_statistic(context, optimum.objective, s);
    let mut step = match se_w {
        Some(se) if se.is_finite() && se > 0.0 => 0.4 * se,
        _ => 0.05 * range,
    }
    .clamp(1e-6 * range, 0.25 * range);
    let bound = if direction < 0.0 {
        coordinate.lower
    } else {
        coordinate.upper
    };
    let mut inside_w = optimum.w.clone();
    let mut inside_stat = 0.0;
    let record_better = |r: &Refined, better: &mut Option<Refined>| {
        if statistic(r.objective) < -BETTER_BY
            && better.as_ref().is_none_or(|b| r.objective < b.objective)
        {
            *better = Some(r.clone());
        }
    };
    for _ in 0..MAX_STEPS {
        let here = inside_w[j];
        if (bound - here).abs() <= 1e-12 * range.max(1.0) {
            return SideEnd::OpenAtBound {
                statistic: inside_stat,
            };
        }
        let mut next = here + direction * step;
        let at_bound = (direction < 0.0 && next <= bound) || (direction > 0.0 && next >= bound);
        if at_bound {
            next = bound;
        }
        let mut w = inside_w.clone();
        w[j] = next;
        let refined = match refine(context, &w, &free) {
            Ok(r) => r,
            Err(failure) => {
                return SideEnd::Failed {
                    message: failure.message,
                    last: coordinate.natural(here),
                }
            }
        };
        record_better(&refined, better);
        let stat = statistic(refined.objective);
        points.push(ProfilePoint {
            value: coordinate.natural(next),
            statistic: stat,
        });
        if stat >= threshold {
            let crossing = locate(
                context,
                &free,
                j,
                (&inside_w, inside_stat),
                (&refined.w, stat),
                threshold,
                &statistic,
                points,
            );
            return SideEnd::Closed(coordinate.natural(crossing));
        }
        if at_bound {
            return SideEnd::OpenAtBound { statistic: stat };
        }
        let rise = stat - inside_stat;
        if rise < 0.1 * threshold {
            step = (step * 2.0).min(0.25 * range);
        } else if rise > 0.5 * threshold {
            step *= 0.5;
        }
        inside_w = refined.w;
        inside_stat = stat;
    }
    SideEnd::StepLimit {
        last: coordinate.natural(inside_w[j]),
    }
}

/// The crossing of the threshold between an inside point (statistic below
/// it) and an outside one, by the Illinois method on √statistic.
#[allow(clippy::too_many_arguments)]
fn locate(
    context: &Context,
    free: &[usize],
    j: usize,
    (inside_w, inside_stat): (&[f64], f64),
    (outside_w, outside_stat): (&[f64], f64),
    threshold: f64,
    statistic: &dyn Fn(f64) -> f64,
    points: &mut Vec<ProfilePoint>,
) -> f64 {
    let root = threshold.sqrt();
    let g = |s: f64| s.max(0.0).sqrt() - root;
    let (mut a, mut ga) = (inside_w[j], g(inside_stat));
    let (mut b, mut gb) = (outside_w[j], g(outside_stat));
    let mut warm = inside_w.to_vec();
    let mut side = 0;
    let coordinate = context.coordinates[j];
    for _ in 0..6 {
        let x = if gb != ga {
            b - gb * (b - a) / (gb - ga)
        } else {
            0.5 * (a + b)
        };
        let x = if (x - a) * (x - b) < 0.0 {
            x
        } else {
            0.5 * (a + b)
        };
        let mut w = warm.clone();
        w[j] = x;
        let Ok(r) = refine(context, &w, free) else {
            break;
        };
        let stat = statistic(r.objective);
        points.push(ProfilePoint {
            value: coordinate.natural(x),
            statistic: stat,
        });
        let gx = g(stat);
        if (stat - threshold).abs() <= 0.005 * threshold {
            return x;
        }
        if gx < 0.0 {
            a = x;
            ga = gx;
            warm = r.w;
            if side == -1 {
                gb *= 0.5;
            }
            side = -1;
        } else {
            b = x;
            gb = gx;
            if side == 1 {
                ga *= 0.5;
            }
            side = 1;
        }
    }
    if gb != ga {
        b - gb * (b - a) / (gb - ga)
    } else {
        0.5 * (a + b)
    }
}
