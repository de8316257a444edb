//! Random numbers for stochastic runs: one seeded generator per run and the
//! few samplers the engine needs.
//!
//! Reproducibility across targets: the generator (xoshiro256++, Blackman &
//! Vigna 2021, ACM Trans. Math. Softw. 47:36) is integer arithmetic, and
//! every transcendental function here (exp, ln, ln(1+x), lgamma, cos) comes
//! from the `libm` crate, the same code on native and wasm32. Standard
//! library math may call the platform's C library, whose last bits differ
//! between targets. `sqrt`, `floor` and `abs` are exactly rounded by IEEE
//! 754 on every target, and Rust never fuses multiply–adds on its own, so
//! the same seed gives bit-identical draws everywhere.

use rand_core::{RngCore, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

/// 2⁻⁵³: the spacing of doubles in [0.5, 1).
const UNIT: f64 = 1.0 / 9_007_199_254_740_992.0;

/// ln(2π).
const LN_TWO_PI: f64 = 1.837_877_066_409_345_5;

/// One step of SplitMix64 (Steele, Lea & Flood 2014, OOPSLA), used to mix
/// a master seed and a run index into a run's seed.
fn splitmix64(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The generator of one run.
#[derive(Clone, Debug)]
pub struct RunRng {
    inner: Xoshiro256PlusPlus,
}

impl RunRng {
    /// Run `run`'s generator under master seed `seed`: xoshiro256++ seeded
    /// (through SplitMix64) from SplitMix64(SplitMix64(seed) XOR run). A run
    /// depends only on (seed, run), never on batching or threads.
    pub fn for_run(seed: u64, run: u64) -> RunRng {
        RunRng {
            inner: Xoshiro256PlusPlus::seed_from_u64(splitmix64(splitmix64(seed) ^ run)),
        }
    }

    pub fn next_u64(&mut self) -> u64 {
        self.inner.next_u64()
    }

    /// Uniform on [0, 1), in steps of 2⁻⁵³.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * UNIT
    }

    /// Uniform on (0, 1], so its logarithm is finite.
    pub fn uniform_open(&mut self) -> f64 {
        ((self.next_u64() >> 11) + 1) as f64 * UNIT
    }

    /// Exponential waiting time with the given rate (> 0).
    pub fn exponential(&mut self, rate: f64) -> f64 {
        self.standard_exponential() / rate
    }

    /// A standard exponential deviate (mean 1) by the ziggurat method of
    /// Marsaglia & Tsang (2000, J. Statist. Softw. 5(8)) with 256 layers, in
    /// the form of Doornik (2005, An Improved Ziggurat Method): one 64-bit
    /// draw picks a layer (low 8 bits) and a position in it (high 53 bits);
    /// about 98.9% of draws need no logarithm or exponential.
    pub fn standard_exponential(&mut self) -> f64 {
        let z = ziggurat();
        loop {
            let bits = self.next_u64();
            let i = (bits & 0xFF) as usize;
            let x = (bits >> 11) as f64 * UNIT * z.x[i];
            if x < z.x[i + 1] {
                return x;
            }
            if i == 0 {
                // The tail beyond r: r + a fresh exponential (memoryless).
                return ZIGGURAT_R - libm::log(self.uniform_open());
            }
            // The wedge between the layer's rectangle and the density.
            let y = z.f[i] + self.uniform() * (z.f[i + 1] - z.f[i]);
            if y < libm::exp(-x) {
                return x;
            }
        }
    }

    /// Standard normal deviate by the Box–Muller transform (Box & Muller
    /// 1958, Ann. Math. Statist. 29:610).
    pub fn standard_normal(&mut self) -> f64 {
        let radius = (-2.0 * libm::log(self.uniform_open())).sqrt();
        radius * libm::cos(std::f64::consts::TAU * self.uniform())
    }

    /// `x` rounded to a whole number at random so that the expected result
    /// is `x`: ⌊x⌋ + 1 with probability x − ⌊x⌋, else ⌊x⌋. Whole numbers are
    /// returned unchanged without drawing.
    pub fn round_stochastic(&mut self, x: f64) -> f64 {
        let whole = x.floor();
        let fraction = x - whole;
        if fraction > 0.0 && self.uniform() < fraction {
            whole + 1.0
        } else {
            whole
        }
    }

    /// A Poisson deviate with the given mean: inversion by sequential search
    /// below a mean of 10, the PTRS transformed rejection of Hörmann (1993,
    /// Insurance: Mathematics and Economics 12:39) from 10 on. A mean that
    /// is not positive gives 0; a mean past 2⁵² returns the mean rounded
    /// (its relative spread is below 10⁻⁷ there).
    pub fn poisson(&mut self, mean: f64) -> u64 {
        if mean.is_nan() || mean <= 0.0 {
            return 0;
        }
        if mean < 10.0 {
            return self.poisson_inversion(mean);
        }
        if mean >= 4.5e15 {
            return mean.round() as u64;
        }
        self.poisson_ptrs(mean)
    }

    fn poisson_inversion(&mut self, mean: f64) -> u64 {
        loop {
            let mut u = self.uniform();
            let mut p = libm::exp(-mean);
            let mut k = 0u64;
            // P(X > 200) for a mean below 10 is under 1e-150: a search that
            // runs that far only meets rounding, so it starts again.
            while k <= 200 {
                if u < p {
                    return k;
                }
                u -= p;
                k += 1;
                p *= mean / k as f64;
            }
        }
    }

    fn poisson_ptrs(&mut self, mean: f64) -> u64 {
        let sqrt_mean = mean.sqrt();
        let b = 0.931 + 2.53 * sqrt_mean;
        let a = -0.059 + 0.02483 * b;
        let inv_alpha = 1.1239 + 1.1328 / (b - 3.4);
        let v_r = 0.9277 - 3.6224 / (b - 2.0);
        loop {
            let u = self.uniform() - 0.5;
            let v = self.uniform();
            let us = 0.5 - u.abs();
            let k = ((2.0 * a / us + b) * u + mean + 0.43).floor();
            if us >= 0.07 && v <= v_r {
                return k as u64;
            }
            // k is NaN or −∞ when us = 0.
            if k.is_nan() || k < 0.0 || (us < 0.013 && v > us) {
                continue;
            }
            let log_hat = libm::log(v * inv_alpha / (a / (us * us) + b));
            if log_hat <= poisson_log_pmf(k, mean) {
                return k as u64;
            }
        }
    }

    /// A binomial deviate: successes in `n` trials of probability `p`.
    /// Inversion (BINV of Kachitvichyanukul & Schmeiser 1988, Commun.
    /// Statist. Simul. 17:1497) when n·min(p, 1−p) < 10, else the BTRS
    /// transformed rejection of Hörmann (1993, J. Statist. Comput. Simul.
    /// 46:101).
    pub fn binomial(&mut self, n: u64, p: f64) -> u64 {
        if n == 0 || p.is_nan() || p <= 0.0 {
            return 0;
        }
        if p >= 1.0 {
            return n;
        }
        if p > 0.5 {
            return n - self.binomial(n, 1.0 - p);
        }
        let nf = n as f64;
        if nf * p < 10.0 {
            self.binomial_inversion(n, p)
        } else {
            self.binomial_btrs(nf, p)
        }
    }

    fn binomial_inversion(&mut self, n: u64, p: f64) -> u64 {
        let q = 1.0 - p;
        let s = p / q;
        let a = (n as f64 + 1.0) * s;
        let q_to_n = libm::exp(n as f64 * libm::log1p(-p));
        loop {
            let mut u = self.uniform();
            let mut r = q_to_n;
            let mut x = 0u64;
            // With n·p < 10, P(X > 110) is below 1e-60: a search that gets
            // that far only meets rounding, so it starts again (BINV's rule).
            while x <= 110 && x <= n {
                if u < r {
                    return x;
                }
                u -= r;
                x += 1;
                r *= a / x as f64 - s;
            }
        }
    }

    fn binomial_btrs(&mut self, n: f64, p: f64) -> u64 {
        let q = 1.0 - p;
        let spq = (n * p * q).sqrt();
        let b = 1.15 + 2.53 * spq;
        let a = -0.0873 + 0.0248 * b + 0.01 * p;
        let c = n * p + 0.5;
        let v_r = 0.92 - 4.2 / b;
        let alpha = (2.83 + 5.1 / b) * spq;
        let r = p / q;
        let m = ((n + 1.0) * p).floor();
        loop {
            let u = self.uniform() - 0.5;
            let v = self.uniform();
            let us = 0.5 - u.abs();
            let k = ((2.0 * a / us + b) * u + c).floor();
            if k.is_nan() || k < 0.0 || k > n {
                continue;
            }
            if us >= 0.07 && v <= v_r {
                return k as u64;
            }
            let log_hat = libm::log(v * alpha / (a / (us * us) + b));
            // ln f(k)/f(m) written with Stirling's formula and its
            // correction terms, accurate for any n (differences of lgamma
            // would lose every digit at large n).
            let (nm, nk) = (n - m + 1.0, n - k + 1.0);
            let log_ratio = (m + 0.5) * libm::log((m + 1.0) / (r * nm))
                + (n + 1.0) * libm::log(nm / nk)
                + (k + 0.5) * libm::log(r * nk / (k + 1.0))
                + stirling_tail(m)
                + stirling_tail(n - m)
                - stirling_tail(k)
                - stirling_tail(n - k);
            if log_hat <= log_ratio {
                return k as u64;
            }
        }
    }
}

/// Start of the tail of the 256-layer exponential ziggurat (Marsaglia &
/// Tsang 2000, table for the exponential).
const ZIGGURAT_R: f64 = 7.697_117_470_131_05;
/// Area of each layer.
const ZIGGURAT_V: f64 = 0.003_949_659_822_581_557;

/// Layer edges x[0..=256] (x[0] = V/f(r) for the base layer, x[1] = r,
/// decreasing to x[256] = 0) and f(x) = e^{−x} at each.
struct Ziggurat {
    x: [f64; 257],
    f: [f64; 257],
}

fn ziggurat() -> &'static Ziggurat {
    static TABLES: std::sync::OnceLock<Ziggurat> = std::sync::OnceLock::new();
    TABLES.get_or_init(|| {
        let mut x = [0.0; 257];
        let mut f = [0.0; 257];
        let f_r = libm::exp(-ZIGGURAT_R);
        x[0] = ZIGGURAT_V / f_r;
        f[0] = 0.0;
        x[1] = ZIGGURAT_R;
        f[1] = f_r;
        // Each layer has area V: f(x[i+1]) = f(x[i]) + V/x[i].
        for i in 1..255 {
            f[i + 1] = f[i] + ZIGGURAT_V / x[i];
            x[i + 1] = -libm::log(f[i + 1]);
        }
        x[256] = 0.0;
        f[256] = 1.0;
        Ziggurat { x, f }
    })
}

/// fc(k) = ln k! − [(k + ½) ln(k + 1) − (k + 1) + ½ ln 2π], the error of
/// Stirling's formula: from lgamma for k ≤ 9, else its asymptotic series
/// 1/12 − 1/360 + 1/1260 in powers of 1/(k+1) (e.g. Abramowitz & Stegun
/// 1964, 6.1.41).
fn stirling_tail(k: f64) -> f64 {
    let k1 = k + 1.0;
    if k <= 9.0 {
        return libm::lgamma(k1) - ((k + 0.5) * libm::log(k1) - k1 + 0.5 * LN_TWO_PI);
    }
    let inv_sq = 1.0 / (k1 * k1);
    (1.0 / 12.0 - (1.0 / 360.0 - inv_sq / 1260.0) * inv_sq) / k1
}

/// ln P(X = k) for X ~ Poisson(mean), in a form that stays accurate for
/// large k and mean: (k + 1 − mean) + k·ln(mean/(k+1)) − ½ ln(2π(k+1)) − fc(k).
fn poisson_log_pmf(k: f64, mean: f64) -> f64 {
    let k1 = k + 1.0;
    (k1 - mean) + k * libm::log1p((mean - k1) / k1)
        - 0.5 * (LN_TWO_PI + libm::log(k1))
        - stirling_tail(k)
}
