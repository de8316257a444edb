//! Residuals and likelihoods of the four objectives.
//!
//! Every objective is minimised as a sum of squared residuals Σ rᵢ², so one
//! Levenberg–Marquardt code serves them all:
//! - log least squares: rᵢ = ln(yᵢ + 1) − ln(μᵢ + 1);
//! - least squares: rᵢ = yᵢ − μᵢ;
//! - Poisson: rᵢ = sign(yᵢ − μᵢ)·√(2[yᵢ ln(yᵢ/μᵢ) − (yᵢ − μᵢ)]), the
//!   deviance residual. Σ rᵢ² is the deviance D = 2[ℓ(saturated) − ℓ(μ)],
//!   whose first term does not depend on the parameters, so minimising D
//!   maximises the Poisson likelihood (McCullagh & Nelder 1989, Generalized
//!   Linear Models, §2.3);
//! - negative binomial (mean μ, variance μ + μ²/k): rᵢ = √(2[cᵢ − ℓᵢ(μᵢ, k)])
//!   with cᵢ = ln Pois(yᵢ; yᵢ), the Poisson log-probability at its best mean.
//!   A negative binomial is a gamma mixture of Poissons, so its probability of
//!   yᵢ never exceeds the best Poisson's: cᵢ ≥ ℓᵢ always and the square root
//!   is real. Σ rᵢ² = 2Σcᵢ − 2ℓ(μ, k) with Σcᵢ constant, so minimising it
//!   over the model parameters and k jointly maximises the likelihood. (The
//!   usual negative-binomial deviance cannot be used for that: its saturated
//!   term changes with k.)
//!
//! Predicted means are floored at [`MU_FLOOR`] so a model that predicts
//! zero where a count is positive gets a large but finite residual.

use serde::{Deserialize, Serialize};
use statrs::function::gamma::ln_gamma;

/// Smallest predicted mean used in the Poisson and negative-binomial terms.
pub const MU_FLOOR: f64 = 1e-10;

/// What the fit minimises.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Objective {
    /// Least squares on ln(count + 1): multiplicative noise, the usual
    /// choice for counts spanning orders of magnitude.
    #[default]
    #[serde(rename = "log_ls")]
    LogLeastSquares,
    /// Least squares on the counts themselves: constant noise.
    #[serde(rename = "ls")]
    LeastSquares,
    /// Poisson likelihood: counts with variance equal to the mean.
    Poisson,
    /// Negative-binomial likelihood: overdispersed counts, variance
    /// μ + μ²/k with the size k estimated too.
    #[serde(rename = "negbin")]
    NegativeBinomial,
}

impl Objective {
    /// The name used on the command line and in JSON.
    pub fn key(self) -> &'static str {
        match self {
            Objective::LogLeastSquares => "log_ls",
            Objective::LeastSquares => "ls",
            Objective::Poisson => "poisson",
            Objective::NegativeBinomial => "negbin",
        }
    }

    pub fn label(self) -> &'static str {
        match self {
            Objective::LogLeastSquares => "least squares on ln(count + 1)",
            Objective::LeastSquares => "least squares on counts",
            Objective::Poisson => "Poisson likelihood (deviance)",
            Objective::NegativeBinomial => "negative-binomial likelihood",
        }
    }

    /// Least-squares objectives estimate a residual variance.
    pub fn is_least_squares(self) -> bool {
        matches!(self, Objective::LogLeastSquares | Objective::LeastSquares)
    }

    /// All objectives by key, for messages.
    pub const KEYS: &'static str = "log_ls, ls, poisson, negbin";

    pub fn from_key(key: &str) -> Option<Objective> {
        match key.replace('-', "_").as_str() {
            "log_ls" => Some(Objective::LogLeastSquares),
            "ls" => Some(Objective::LeastSquares),
            "poisson" => Some(Objective::Poisson),
            "negbin" | "negative_binomial" => Some(Objective::NegativeBinomial),
            _ => None,
        }
    }
}

/// ln Pois(y; μ) without the ln Γ(y + 1) term.
fn poisson_kernel(y: f64, mu: f64) -> f64 {
    if y > 0.0 {
        y * mu.ln() - mu
    } else {
        -mu
    }
}

/// ln of the negative-binomial probability of `y` with mean `mu` and size
/// `k` (Hilbe 2011, Negative Binomial Regression, eq. 8.4 form):
/// ln Γ(y+k) − ln Γ(k) − ln Γ(y+1) + k ln(k/(k+μ)) + y ln(μ/(k+μ)).
pub fn negative_binomial_ln_pmf(y: f64, mu: f64, k: f64) -> f64 {
    let mu = mu.max(MU_FLOOR);
    let y_term = if y > 0.0 {
        y * (mu / (k + mu)).ln()
    } else {
        0.0
    };
    ln_gamma(y + k) - ln_gamma(k) - ln_gamma(y + 1.0) - k * (mu / k).ln_1p() + y_term
}

/// ln of the Poisson probability of `y` with mean `mu`.
pub fn poisson_ln_pmf(y: f64, mu: f64) -> f64 {
    poisson_kernel(y, mu.max(MU_FLOOR)) - ln_gamma(y + 1.0)
}

/// The residual of one observation (see the module notes).
pub fn residual(objective: Objective, y: f64, mu: f64, k: f64) -> f64 {
    match objective {
        Objective::LogLeastSquares => y.ln_1p() - mu.max(0.0).ln_1p(),
        Objective::LeastSquares => y - mu,
        Objective::Poisson => {
            let mu = mu.max(MU_FLOOR);
            let d = 2.0 * (poisson_kernel(y, y) - poisson_kernel(y, mu));
            (y - mu).signum() * d.max(0.0).sqrt()
        }
        Objective::NegativeBinomial => {
            let best = if y > 0.0 { poisson_ln_pmf(y, y) } else { 0.0 };
            let d = 2.0 * (best - negative_binomial_ln_pmf(y, mu, k));
            d.max(0.0).sqrt()
        }
    }
}

/// The residual shown to users: on the objective's scale, signed
/// observed − predicted. For the negative binomial it is the usual deviance
/// residual at the fitted k (Hilbe 2011, §5.3).
pub fn display_residual(objective: Objective, y: f64, mu: f64, k: f64) -> f64 {
    match objective {
        Objective::NegativeBinomial => {
            let mu = mu.max(MU_FLOOR);
            let term = if y > 0.0 { y * (y / mu).ln() } else { 0.0 };
            let d = 2.0 * (term - (y + k) * ((y + k) / (mu + k)).ln());
            (y - mu).signum() * d.max(0.0).sqrt()
        }
        _ => residual(objective, y, mu, k),
    }
}

/// The maximised log-likelihood for an objective value `s` = Σ rᵢ² over
/// `ys` with predictions `mus`. For least squares the noise variance is
/// profiled out (σ̂² = s/n): ℓ = −(n/2)(ln(2π s/n) + 1), the likelihood of
/// the (transformed) counts under normal errors.
pub fn log_likelihood(objective: Objective, ys: &[f64], mus: &[f64], s: f64, k: f64) -> f64 {
    let n = ys.len() as f64;
    match objective {
        Objective::LogLeastSquares | Objective::LeastSquares => {
            let s = s.max(f64::MIN_POSITIVE);
            -0.5 * n * ((2.0 * std::f64::consts::PI * s / n).ln() + 1.0)
        }
        Objective::Poisson => ys
            .iter()
            .zip(mus)
            .map(|(&y, &m)| poisson_ln_pmf(y, m))
            .sum(),
        Objective::NegativeBinomial => ys
            .iter()
            .zip(mus)
            .map(|(&y, &m)| negative_binomial_ln_pmf(y, m, k))
            .sum(),
    }
}

/// Weight of one observation in the Fisher information of the model
/// parameters, as a multiple of (∂g/∂θ)(∂g/∂θ)ᵀ with g the objective's
/// scale: 1/σ² for least squares (g = ln(μ+1) or μ), 1/μ for Poisson and
/// 1/(μ + μ²/k) for the negative binomial (g = μ; McCullagh & Nelder 1989,
/// §2.5; Lawless 1987, Can. J. Statist. 15:209, for the negative binomial).
pub fn information_weight(objective: Objective, mu: f64, sigma2: f64, k: f64) -> f64 {
    let mu = mu.max(MU_FLOOR);
    match objective {
        Objective::LogLeastSquares | Objective::LeastSquares => 1.0 / sigma2,
        Objective::Poisson => 1.0 / mu,
        Objective::NegativeBinomial => 1.0 / (mu + mu * mu / k),
    }
}

/// The objective's scale g(μ) whose derivative enters the information.
pub fn scale(objective: Objective, mu: f64) -> f64 {
    match objective {
        Objective::LogLeastSquares => mu.max(0.0).ln_1p(),
        _ => mu,
    }
}
