//! Stochastic runs over all threads of rayon's current pool. The result
//! does not depend on the number of threads: runs depend only on the seed
//! and their index, and accumulators merge in any order.

use rayon::prelude::*;
use tussock_core::stochastic::{Ensemble, EnsembleAccumulator};

/// Runs in chunks for the pool: about eight per thread, at least one run.
pub fn chunks(runs: u64, threads: usize) -> Vec<(u64, u64)> {
    let per = (runs / (8 * threads.max(1) as u64)).max(1);
    (0..runs.div_ceil(per))
        .map(|c| (c * per, ((c + 1) * per).min(runs)))
        .collect()
}

/// Runs `0..runs` of `ensemble`, in chunks over the pool, merged.
pub fn ensemble(ensemble: &Ensemble, runs: u64) -> EnsembleAccumulator {
    chunks(runs, rayon::current_num_threads())
        .into_par_iter()
        .map(|(start, end)| {
            let mut part = ensemble.accumulator();
            ensemble.run_batch(&mut part, start..end, &mut |_, _| true);
            part
        })
        .reduce(
            || ensemble.accumulator(),
            |mut a, b| {
                a.merge(b);
                a
            },
        )
}
