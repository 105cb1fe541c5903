//! The Monte Carlo run: trials spread over every core in fixed chunks, each
//! trial's values drawn from its own stream, every analysis frequency solved
//! exactly, and statistics that merge the same way whatever the threads did.

use super::stats::{squared_of_cmrr_db, SMALLEST_SQUARED};
use super::{CmrrHistogram, Sampler, SplitMix64};
use crate::engine::{settle, ChainKernel, EngineError};
use crate::model::Budget;
use crate::stage::StageValues;
use rayon::prelude::*;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Mutex;

/// The most trials one run accepts.
pub const MAX_TRIALS: u64 = 100_000_000;
/// Trials per unit of work handed to a thread.
const CHUNK: u64 = 256;
/// The most |ε|² values a thread holds before counting them into its
/// histograms: trials are solved row by row into a block, then counted
/// frequency by frequency, so that each histogram is counted into while it
/// sits in cache.
const BLOCK_VALUES: usize = 2 * 1024;

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
    /// Error of interference source `source` at most its limit: the
    /// conversion at `point` at most `max_conversion` (the limit over the
    /// source's amplitude, in like forms; see
    /// [`crate::model::ErrorLimit::allowed_conversion`]).
    MaximumError {
        /// Index into the run's frequencies.
        point: usize,
        /// Index of the source in the budget.
        source: usize,
        /// The largest |ε| the limit allows.
        max_conversion: f64,
    },
}

impl TrialCheck {
    /// The check as a bound on |ε|² at one point: the trial passes when
    /// |ε|² there is at most the bound.
    fn as_squared_bound(&self) -> SquaredBound {
        match *self {
            // A CMRR beyond the resolution floor reads as infinite and so
            // meets any minimum.
            TrialCheck::MinimumCmrr { point, min_db } => SquaredBound {
                point,
                max_squared: squared_of_cmrr_db(min_db).max(SMALLEST_SQUARED),
            },
            TrialCheck::MaximumError {
                point,
                max_conversion,
                ..
            } => SquaredBound {
                point,
                max_squared: max_conversion.powi(2),
            },
        }
    }
}

/// A requirement check as a bound on |ε|² at one analysis frequency.
#[derive(Debug, Clone, Copy)]
struct SquaredBound {
    point: usize,
    max_squared: f64,
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

    /// Count one trial's passes; `squared` holds its |ε|² per frequency.
    fn count_checks(&mut self, squared: &[f64], bounds: &[SquaredBound]) {
        let mut all = true;
        for (count, bound) in self.check_passes.iter_mut().zip(bounds) {
            if squared[bound.point] <= bound.max_squared {
                *count += 1;
            } else {
                all = false;
            }
        }
        if all {
            self.all_passed += 1;
        }
        self.trials += 1;
    }

    /// Count a block of trials into the histograms: row r of `block` holds
    /// trial `first + r`'s |ε|² at each frequency.
    fn record_block(&mut self, block: &[f64], first: u64) {
        let points = self.histograms.len();
        if points == 0 {
            return;
        }
        for (index, histogram) in self.histograms.iter_mut().enumerate() {
            histogram.record_run(block[index..].iter().step_by(points).copied(), first);
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

/// What every trial shares: the budget, how to draw its values and how to
/// solve them.
struct TrialSolver<'a> {
    budget: &'a Budget,
    sampler: Sampler,
    kernel: ChainKernel,
    frequencies: &'a [f64],
    options: YieldOptions,
}

/// One thread's scratch space for solving trials.
struct Workspace {
    values: Vec<f64>,
    stages: Vec<StageValues>,
}

impl Workspace {
    fn new(budget: &Budget) -> Workspace {
        Workspace {
            values: budget.parameters.nominal_values(),
            stages: Vec::with_capacity(budget.chain.len()),
        }
    }
}

impl TrialSolver<'_> {
    /// Draw trial `trial`'s values and solve |ε|² at every frequency into
    /// `squared`.
    fn solve(
        &self,
        trial: u64,
        workspace: &mut Workspace,
        squared: &mut [f64],
    ) -> Result<(), EngineError> {
        let values = &mut workspace.values;
        let mut rng = SplitMix64::for_trial(self.options.seed, trial);
        self.sampler.fill(values, &mut rng);
        let delta_t = match (self.options.temperature, self.budget.temperature) {
            (TemperatureMode::Drawn, Some(r)) => {
                r.low_k + (r.high_k - r.low_k) * rng.next_f64() - r.reference_k
            }
            (TemperatureMode::Cold, Some(r)) => r.low_k - r.reference_k,
            (TemperatureMode::Hot, Some(r)) => r.high_k - r.reference_k,
            _ => 0.0,
        };
        settle(self.budget, values, delta_t)?;
        self.kernel.solve(
            &self.budget.chain,
            values,
            &mut workspace.stages,
            self.frequencies,
            squared,
        )
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
    if options.temperature != TemperatureMode::Reference && budget.temperature.is_none() {
        return Err(YieldError::NoTemperatureRange);
    }
    let solver = TrialSolver {
        budget,
        sampler: Sampler::new(budget),
        kernel: ChainKernel::new(),
        frequencies,
        options,
    };
    let bounds: Vec<SquaredBound> = checks.iter().map(TrialCheck::as_squared_bound).collect();
    let rows_per_block = (BLOCK_VALUES / frequencies.len().max(1)).clamp(1, CHUNK as usize);
    let chunks = options.trials.div_ceil(CHUNK);
    let next_chunk = AtomicU64::new(0);
    let finished = AtomicU64::new(0);
    let failure: Mutex<Option<YieldError>> = Mutex::new(None);
    let workers = rayon::current_num_threads().max(1);
    let tallies: Vec<Tally> = (0..workers)
        .into_par_iter()
        .map(|_| {
            let mut tally = Tally::new(frequencies.len(), checks.len());
            let mut workspace = Workspace::new(budget);
            let mut block = vec![0.0; rows_per_block * frequencies.len()];
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
                let mut start = first;
                while start < last {
                    let rows = (last - start).min(rows_per_block as u64) as usize;
                    let width = frequencies.len();
                    for r in 0..rows {
                        let trial = start + r as u64;
                        let row = &mut block[r * width..(r + 1) * width];
                        if let Err(error) = solver.solve(trial, &mut workspace, row) {
                            failure
                                .lock()
                                .expect("no thread panics holding it")
                                .get_or_insert(YieldError::Engine { trial, error });
                            stop.store(true, Ordering::Relaxed);
                            return tally;
                        }
                        tally.count_checks(row, &bounds);
                    }
                    tally.record_block(&block[..rows * width], start);
                    start += rows as u64;
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
