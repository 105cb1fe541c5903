//! The Monte Carlo run: trials spread over every core in fixed chunks, each
//! trial's values drawn from its own stream, every analysis frequency solved
//! exactly, and statistics that merge the same way whatever the threads did.

use super::{CmrrHistogram, FastChain, Prepared, Sampler, SplitMix64};
use crate::engine::{chain_response, EngineError, RESOLUTION_FLOOR};
use crate::model::Budget;
use crate::stage::Point;
use rayon::prelude::*;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Mutex;

/// The most trials one run accepts.
pub const MAX_TRIALS: u64 = 100_000_000;
/// Trials per unit of work handed to a thread.
const CHUNK: u64 = 256;

/// Where the operating temperature sits in a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum TemperatureMode {
    /// At the reference temperature.
    Reference,
    /// Drawn uniformly over the operating range, per trial.
    Drawn,
    /// At the cold end of the range.
    Cold,
    /// At the hot end of the range.
    Hot,
}

/// What to run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct YieldOptions {
    /// How many trials.
    pub trials: u64,
    /// The master seed.
    pub seed: u64,
    /// Where the temperature sits.
    pub temperature: TemperatureMode,
}

/// Why a run could not start or finish.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum YieldError {
    /// Too many or too few trials.
    #[error("{trials} trials requested; a run takes 1 to {MAX_TRIALS}")]
    Trials {
        /// The number asked for.
        trials: u64,
    },
    /// A temperature mode needs a range the budget lacks.
    #[error(
        "the budget has no temperature range, so the temperature can only sit at the reference"
    )]
    NoTemperatureRange,
    /// The chain failed to solve in some trial.
    #[error("trial {trial}: {error}")]
    Engine {
        /// The trial's index.
        trial: u64,
        /// What failed.
        error: EngineError,
    },
}

/// One requirement check a trial must pass.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TrialCheck {
    /// CMRR at frequency `point` at least `min_db`.
    MinimumCmrr {
        /// Index into the run's frequencies.
        point: usize,
        /// The minimum, dB.
        min_db: f64,
    },
    /// Error of source at `point` (amplitude `peak_v`) at most `limit_v`.
    MaximumError {
        /// Index into the run's frequencies.
        point: usize,
        /// The source's peak common mode, V.
        peak_v: f64,
        /// The allowed peak error, V.
        limit_v: f64,
    },
}

impl TrialCheck {
    fn passes(&self, conversions: &[f64]) -> bool {
        match *self {
            TrialCheck::MinimumCmrr { point, min_db } => to_db(conversions[point]) >= min_db,
            TrialCheck::MaximumError {
                point,
                peak_v,
                limit_v,
            } => conversions[point] * peak_v <= limit_v,
        }
    }
}

/// A finished (or interrupted) run.
#[derive(Debug, Clone, PartialEq)]
pub struct YieldRun {
    /// The analysis frequencies, ascending.
    pub frequencies: Vec<f64>,
    /// The CMRR histogram at each.
    pub histograms: Vec<CmrrHistogram>,
    /// The requirement checks, in the order given.
    pub checks: Vec<TrialCheck>,
    /// How many trials passed each check.
    pub check_passes: Vec<u64>,
    /// How many trials passed every check.
    pub all_passed: u64,
    /// How many trials ran.
    pub trials_run: u64,
    /// Whether the run was stopped before the end.
    pub interrupted: bool,
}

fn to_db(conversion: f64) -> f64 {
    if conversion < RESOLUTION_FLOOR {
        f64::INFINITY
    } else {
        -20.0 * conversion.log10()
    }
}

/// One thread's tallies.
#[derive(Debug, Clone)]
struct Tally {
    histograms: Vec<CmrrHistogram>,
    check_passes: Vec<u64>,
    all_passed: u64,
    trials: u64,
}

impl Tally {
    fn new(points: usize, checks: usize) -> Tally {
        Tally {
            histograms: vec![CmrrHistogram::default(); points],
            check_passes: vec![0; checks],
            all_passed: 0,
            trials: 0,
        }
    }

    fn merge(&mut self, other: &Tally) {
        for (mine, theirs) in self.histograms.iter_mut().zip(&other.histograms) {
            mine.merge(theirs);
        }
        for (mine, theirs) in self.check_passes.iter_mut().zip(&other.check_passes) {
            *mine += theirs;
        }
        self.all_passed += other.all_passed;
        self.trials += other.trials;
    }
}

/// Run `options.trials` trials. `progress` is told the number of trials
/// finished so far now and then; setting `stop` ends the run early after
/// the chunks in hand.
pub fn run_yield(
    budget: &Budget,
    frequencies: &[f64],
    checks: &[TrialCheck],
    options: YieldOptions,
    progress: &(dyn Fn(u64) + Sync),
    stop: &AtomicBool,
) -> Result<YieldRun, YieldError> {
    if options.trials == 0 || options.trials > MAX_TRIALS {
        return Err(YieldError::Trials {
            trials: options.trials,
        });
    }
    let range = budget.temperature;
    if options.temperature != TemperatureMode::Reference && range.is_none() {
        return Err(YieldError::NoTemperatureRange);
    }
    let sampler = Sampler::new(budget);
    // The closed-form evaluator where the chain has one; the general engine
    // otherwise. Both solve the same equations (tested against each other).
    let fast = FastChain::new(budget);
    let nominal = budget.parameters.nominal_values();
    let chunks = options.trials.div_ceil(CHUNK);
    let next_chunk = AtomicU64::new(0);
    let finished = AtomicU64::new(0);
    let failure: Mutex<Option<YieldError>> = Mutex::new(None);
    let workers = rayon::current_num_threads().max(1);
    let tallies: Vec<Tally> = (0..workers)
        .into_par_iter()
        .map(|_| {
            let mut tally = Tally::new(frequencies.len(), checks.len());
            let mut values = nominal.clone();
            let mut conversions = vec![0.0; frequencies.len()];
            let mut prepared = Prepared::default();
            loop {
                if stop.load(Ordering::Relaxed) {
                    break;
                }
                let chunk = next_chunk.fetch_add(1, Ordering::Relaxed);
                if chunk >= chunks {
                    break;
                }
                let first = chunk * CHUNK;
                let last = (first + CHUNK).min(options.trials);
                for trial in first..last {
                    let mut rng = SplitMix64::for_trial(options.seed, trial);
                    sampler.fill(&mut values, &mut rng);
                    let delta_t = match (options.temperature, range) {
                        (TemperatureMode::Drawn, Some(r)) => {
                            r.low_k + (r.high_k - r.low_k) * rng.next_f64() - r.reference_k
                        }
                        (TemperatureMode::Cold, Some(r)) => r.low_k - r.reference_k,
                        (TemperatureMode::Hot, Some(r)) => r.high_k - r.reference_k,
                        _ => 0.0,
                    };
                    budget.parameters.resolve(&mut values, delta_t);
                    if let Some(fast) = &fast {
                        fast.prepare(&values, &mut prepared);
                    }
                    for (index, &freq) in frequencies.iter().enumerate() {
                        let conversion = match &fast {
                            Some(fast) => fast.conversion(&prepared, freq),
                            None => match chain_response(&budget.chain, &Point::new(freq, &values))
                            {
                                Ok(response) => response.conversion().norm(),
                                Err(error) => {
                                    failure
                                        .lock()
                                        .expect("no thread panics holding it")
                                        .get_or_insert(YieldError::Engine { trial, error });
                                    stop.store(true, Ordering::Relaxed);
                                    return tally;
                                }
                            },
                        };
                        conversions[index] = conversion;
                        tally.histograms[index].record(to_db(conversion), trial);
                    }
                    let mut all = true;
                    for (count, check) in tally.check_passes.iter_mut().zip(checks) {
                        if check.passes(&conversions) {
                            *count += 1;
                        } else {
                            all = false;
                        }
                    }
                    if all {
                        tally.all_passed += 1;
                    }
                    tally.trials += 1;
                }
                let done = finished.fetch_add(last - first, Ordering::Relaxed) + (last - first);
                progress(done);
            }
            tally
        })
        .collect();
    if let Some(error) = failure.into_inner().expect("no thread panics holding it") {
        return Err(error);
    }
    let mut total = Tally::new(frequencies.len(), checks.len());
    for tally in &tallies {
        total.merge(tally);
    }
    Ok(YieldRun {
        frequencies: frequencies.to_vec(),
        histograms: total.histograms,
        checks: checks.to_vec(),
        check_passes: total.check_passes,
        all_passed: total.all_passed,
        trials_run: total.trials,
        interrupted: total.trials < options.trials,
    })
}
