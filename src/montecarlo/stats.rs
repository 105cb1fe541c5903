//! Streaming statistics with flat memory: a fixed histogram of CMRR per
//! frequency, pass counts, and the worst trial. Merging two is integer
//! addition and an order-free maximum, so the result does not depend on how
//! trials were spread over threads.
//!
//! Trials are recorded as |ε|², the form the evaluators produce, into
//! log-spaced bins read straight off the number's bits: its exponent and
//! the top [`MANTISSA_BITS`] bits of its mantissa. Each octave of |ε|²
//! (6.02 dB of CMRR) is cut into 2^MANTISSA_BITS bins of equal width in
//! |ε|², at most 10·log10(1 + 2^−MANTISSA_BITS) = 0.034 dB wide. Finding a
//! bin is a shift: exact, with no logarithm and no table.

use crate::engine::RESOLUTION_FLOOR;

/// Mantissa bits kept in a bin's index.
const MANTISSA_BITS: u32 = 7;
/// The shift from a number's bits to its bin index.
const SHIFT: u32 = 52 - MANTISSA_BITS;
/// Lowest CMRR the histogram resolves, dB; anything lower is counted below.
pub const HISTOGRAM_LOW_DB: f64 = -50.0;
/// The widest bin, dB of CMRR: 10·log10(1 + 2^−7).
pub const BIN_DB: f64 = 0.034;
/// |ε|² at the low end of the range: 10^(−HISTOGRAM_LOW_DB/10).
const LARGEST_SQUARED: f64 = 1e5;
/// |ε|² below this reads as an infinite CMRR (the engine's floor).
pub(crate) const SMALLEST_SQUARED: f64 = RESOLUTION_FLOOR * RESOLUTION_FLOOR;

/// The CMRR in dB of a squared conversion |ε|²: infinite below the
/// engine's resolution floor.
pub fn cmrr_db_of_squared(conversion_squared: f64) -> f64 {
    if conversion_squared < SMALLEST_SQUARED {
        f64::INFINITY
    } else {
        -10.0 * conversion_squared.log10()
    }
}

/// The squared conversion |ε|² of a CMRR in dB.
pub fn squared_of_cmrr_db(cmrr_db: f64) -> f64 {
    10f64.powf(-cmrr_db / 10.0)
}

/// The bin index of |ε|², counted from the bin of the smallest resolved
/// value. Rises with |ε|², so falls with CMRR.
#[inline(always)]
fn bin_of(squared: f64) -> usize {
    ((squared.to_bits() >> SHIFT) - (SMALLEST_SQUARED.to_bits() >> SHIFT)) as usize
}

/// The smallest |ε|² in bin `bin`.
fn lower_squared(bin: usize) -> f64 {
    f64::from_bits((bin as u64 + (SMALLEST_SQUARED.to_bits() >> SHIFT)) << SHIFT)
}

/// The highest CMRR in bin `bin`, dB (its edge at the smaller |ε|²).
fn high_edge_db(bin: usize) -> f64 {
    -10.0 * lower_squared(bin).log10()
}

/// The lowest CMRR in bin `bin`, dB (its edge at the larger |ε|²).
fn low_edge_db(bin: usize) -> f64 {
    -10.0 * lower_squared(bin + 1).log10()
}

/// The bin of the largest resolved |ε|².
const LAST_BIN: usize =
    ((LARGEST_SQUARED.to_bits() >> SHIFT) - (SMALLEST_SQUARED.to_bits() >> SHIFT)) as usize;

/// Bins added beyond a new count's bin when the window grows, so that a
/// spread fills its window after a few growths.
const WINDOW_MARGIN: usize = 64;

/// Bin counts kept only over the window of bins that have been counted
/// in, so memory follows the spread, not the histogram's full range.
#[derive(Debug, Clone, Default)]
struct BinWindow {
    /// The bin that `counts[0]` belongs to.
    first: usize,
    counts: Vec<u32>,
}

impl BinWindow {
    /// Count one in bin `bin`.
    #[inline]
    fn add_one(&mut self, bin: usize) {
        if bin.wrapping_sub(self.first) >= self.counts.len() {
            self.cover(bin, bin);
        }
        self.counts[bin - self.first] += 1;
    }

    /// Grow the window to hold bins `low ..= high`, with room to spare in
    /// proportion to its size, so growing costs a constant per count
    /// however the window fills.
    fn cover(&mut self, low: usize, high: usize) {
        if self.counts.is_empty() {
            self.first = low.saturating_sub(WINDOW_MARGIN);
            let last = (high + WINDOW_MARGIN).min(LAST_BIN);
            self.counts = vec![0; last + 1 - self.first];
            return;
        }
        let spare = WINDOW_MARGIN.max(self.counts.len() / 2);
        let end = self.first + self.counts.len();
        if high >= end {
            let last = (high + spare).min(LAST_BIN);
            self.counts.resize(last + 1 - self.first, 0);
        }
        if low < self.first {
            let first = low.saturating_sub(spare);
            let mut counts = vec![0; self.first - first + self.counts.len()];
            counts[self.first - first..].copy_from_slice(&self.counts);
            self.counts = counts;
            self.first = first;
        }
    }

    /// Add another window's counts.
    fn merge(&mut self, other: &BinWindow) {
        if other.counts.is_empty() {
            return;
        }
        self.cover(other.first, other.first + other.counts.len() - 1);
        let offset = other.first - self.first;
        for (mine, theirs) in self.counts[offset..].iter_mut().zip(&other.counts) {
            *mine += theirs;
        }
    }

    /// The bins counted in, ascending, with their counts.
    fn nonzero(&self) -> impl DoubleEndedIterator<Item = (usize, u32)> + '_ {
        self.counts
            .iter()
            .enumerate()
            .filter(|(_, count)| **count > 0)
            .map(|(offset, count)| (self.first + offset, *count))
    }
}

/// Two windows are equal when they hold the same counts, whatever their
/// extent (which depends on the order the counts arrived in).
impl PartialEq for BinWindow {
    fn eq(&self, other: &BinWindow) -> bool {
        self.nonzero().eq(other.nonzero())
    }
}

/// The worse of a worst-so-far and a trial, each (|ε|², trial index): the
/// larger |ε|², and among equals the lower index, so the answer does not
/// depend on the order trials arrive in.
#[inline]
fn worse_of(seen: Option<(f64, u64)>, candidate: (f64, u64)) -> Option<(f64, u64)> {
    match seen {
        Some((squared, trial))
            if squared > candidate.0 || (squared == candidate.0 && trial < candidate.1) =>
        {
            seen
        }
        _ => Some(candidate),
    }
}

/// A histogram of CMRR in dB with the worst trial seen.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CmrrHistogram {
    bins: BinWindow,
    below: u64,
    infinite: u64,
    count: u64,
    /// The largest |ε|² seen (a result that is not a number counts as
    /// infinite) and the index of the trial that gave it (the lowest index
    /// among equals).
    worst: Option<(f64, u64)>,
}

impl CmrrHistogram {
    /// Record one trial's CMRR, dB.
    pub fn record(&mut self, cmrr_db: f64, trial: u64) {
        let squared = if cmrr_db == f64::INFINITY {
            0.0
        } else {
            squared_of_cmrr_db(cmrr_db)
        };
        self.record_squared(squared, trial);
    }

    /// Record one trial's squared conversion |ε|². A result that is not a
    /// number (a failed solve) counts below the range, as the worst.
    pub fn record_squared(&mut self, squared: f64, trial: u64) {
        self.record_run(std::iter::once(squared), trial);
    }

    /// Record consecutive trials' |ε|², the first being trial `first`, as
    /// [`Self::record_squared`] does one. The tallies live in registers
    /// for the run and are stored once.
    #[inline]
    pub fn record_run(&mut self, squared: impl IntoIterator<Item = f64>, first: u64) {
        let (mut count, mut below, mut infinite) = (0u64, 0u64, 0u64);
        let mut worst = self.worst;
        for (trial, value) in (first..).zip(squared) {
            count += 1;
            if value < SMALLEST_SQUARED {
                infinite += 1;
            } else if value <= LARGEST_SQUARED {
                self.bins.add_one(bin_of(value));
            } else {
                below += 1;
            }
            let key = if value.is_nan() { f64::INFINITY } else { value };
            worst = worse_of(worst, (key, trial));
        }
        self.count += count;
        self.below += below;
        self.infinite += infinite;
        self.worst = worst;
    }

    /// Add another histogram's counts to this one.
    pub fn merge(&mut self, other: &CmrrHistogram) {
        self.bins.merge(&other.bins);
        self.below += other.below;
        self.infinite += other.infinite;
        self.count += other.count;
        if let Some(theirs) = other.worst {
            self.worst = worse_of(self.worst, theirs);
        }
    }

    /// How many trials were recorded.
    pub fn count(&self) -> u64 {
        self.count
    }

    /// The worst (lowest) CMRR, dB, and its trial.
    pub fn worst(&self) -> Option<(f64, u64)> {
        self.worst
            .map(|(squared, trial)| (cmrr_db_of_squared(squared), trial))
    }

    /// The CMRR below which a fraction `p` of trials fell, to the bin's
    /// lower edge (so the figure errs low, on the safe side). Infinite when
    /// the quantile lies among infinite results.
    pub fn quantile(&self, p: f64) -> f64 {
        if self.count == 0 {
            return f64::NAN;
        }
        let target = (p * self.count as f64).ceil().max(1.0) as u64;
        let mut seen = self.below;
        if seen >= target {
            return self.worst().map_or(HISTOGRAM_LOW_DB, |w| w.0);
        }
        // From the worst CMRR (the largest |ε|², the highest bin) up.
        for (bin, count) in self.bins.nonzero().rev() {
            seen += u64::from(count);
            if seen >= target {
                return low_edge_db(bin);
            }
        }
        f64::INFINITY
    }

    /// The counts in bars of `width_db`, from `from_db` to `to_db`, for a
    /// plot: (lower edge, count). A bin is counted in the bar holding its
    /// middle.
    pub fn rebinned(&self, from_db: f64, to_db: f64, width_db: f64) -> Vec<(f64, u64)> {
        let mut out: Vec<(f64, u64)> = Vec::new();
        let mut edge = from_db;
        while edge < to_db {
            out.push((edge, 0));
            edge += width_db;
        }
        for (bin, count) in self.bins.nonzero() {
            let db = (low_edge_db(bin) + high_edge_db(bin)) / 2.0;
            if db >= from_db && db < to_db {
                let slot = ((db - from_db) / width_db) as usize;
                if let Some(entry) = out.get_mut(slot) {
                    entry.1 += u64::from(count);
                }
            }
        }
        out
    }

    /// The lowest and highest finite CMRR recorded in the bins, dB.
    pub fn span(&self) -> Option<(f64, f64)> {
        let smallest = self.bins.nonzero().next()?.0;
        let largest = self.bins.nonzero().next_back()?.0;
        Some((low_edge_db(largest), high_edge_db(smallest)))
    }
}

/// The Wilson score interval for a proportion: `passed` of `trials` at
/// normal quantile `z` (1.96 for 95 %). Wilson, "Probable inference, the law
/// of succession, and statistical inference", J. Am. Stat. Assoc. 22, 1927.
pub fn wilson_interval(passed: u64, trials: u64, z: f64) -> (f64, f64) {
    if trials == 0 {
        return (0.0, 1.0);
    }
    let n = trials as f64;
    let p = passed as f64 / n;
    let z2 = z * z;
    let centre = (p + z2 / (2.0 * n)) / (1.0 + z2 / n);
    let half = z * ((p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt()) / (1.0 + z2 / n);
    // With none or all passing, the bound on that side is exactly 0 or 1;
    // rounding would leave it a hair inside.
    let low = if passed == 0 {
        0.0
    } else {
        (centre - half).max(0.0)
    };
    let high = if passed == trials {
        1.0
    } else {
        (centre + half).min(1.0)
    };
    (low, high)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantiles_of_a_known_spread() {
        let mut h = CmrrHistogram::default();
        for i in 0..1000 {
            h.record(60.0 + i as f64 * 0.04, i);
        }
        assert!(
            (h.quantile(0.5) - 79.96).abs() <= BIN_DB + 1e-9,
            "{}",
            h.quantile(0.5)
        );
        assert!((h.quantile(0.001) - 60.0).abs() <= BIN_DB + 1e-9);
        assert_eq!(h.worst(), Some((60.0, 0)));
        let mut other = CmrrHistogram::default();
        other.record(f64::INFINITY, 5000);
        h.merge(&other);
        assert_eq!(h.count(), 1001);
        assert_eq!(h.quantile(1.0), f64::INFINITY);
    }

    /// A value lands in the bin whose edges enclose it, and no bin is wider
    /// than `BIN_DB`.
    #[test]
    fn bins_enclose_their_values_and_stay_narrow() {
        let mut rng = crate::montecarlo::SplitMix64::new(5);
        for _ in 0..100_000 {
            let db = -50.0 + 290.0 * rng.next_f64();
            let squared = squared_of_cmrr_db(db);
            let bin = bin_of(squared);
            assert!(lower_squared(bin) <= squared && squared < lower_squared(bin + 1));
            assert!(low_edge_db(bin) < db + 1e-9 && db <= high_edge_db(bin) + 1e-9);
        }
        for bin in 0..=LAST_BIN {
            let width = high_edge_db(bin) - low_edge_db(bin);
            assert!(width > 0.0 && width <= BIN_DB, "bin {bin}: {width} dB");
        }
    }

    /// Quantiles read off the bins agree with the sorted values: never
    /// above the true order statistic and within one bin of it; the same
    /// counts merge to the same histogram in any split.
    #[test]
    fn quantiles_match_sorted_values_and_merging_is_order_free() {
        let mut rng = crate::montecarlo::SplitMix64::new(9);
        let values: Vec<f64> = (0..20_000).map(|_| 70.0 + 8.0 * rng.normal()).collect();
        let mut whole = CmrrHistogram::default();
        whole.record_run(values.iter().map(|db| squared_of_cmrr_db(*db)), 0);
        let mut sorted = values.clone();
        sorted.sort_by(f64::total_cmp);
        for p in [0.001, 0.01, 0.05, 0.5, 0.9] {
            let truth = sorted[(p * values.len() as f64).ceil() as usize - 1];
            let read = whole.quantile(p);
            assert!(
                read <= truth + 1e-9 && truth - read <= BIN_DB,
                "{p}: {read} against {truth}"
            );
        }
        let (worst_db, worst_trial) = whole.worst().unwrap();
        assert!((worst_db - sorted[0]).abs() < 1e-9);
        assert_eq!(values[worst_trial as usize], sorted[0]);
        let mut halves = [CmrrHistogram::default(), CmrrHistogram::default()];
        for (trial, db) in values.iter().enumerate().rev() {
            halves[trial % 2].record(*db, trial as u64);
        }
        let mut merged = halves[1].clone();
        merged.merge(&halves[0]);
        assert_eq!(merged, whole);
    }

    #[test]
    fn wilson_interval_worked_example() {
        // 81 successes in 263 trials at 95 %: (0.2553, 0.3662), as given by
        // Newcombe, "Two-sided confidence intervals for the single
        // proportion", Statistics in Medicine 17, 1998, Table I (from memory).
        let (low, high) = wilson_interval(81, 263, 1.959964);
        assert!(
            (low - 0.2553).abs() < 5e-4 && (high - 0.3662).abs() < 5e-4,
            "{low} {high}"
        );
        let (low, high) = wilson_interval(100, 100, 1.96);
        assert!(high == 1.0 && low > 0.96, "{low} {high}");
        let (low, high) = wilson_interval(0, 100, 1.96);
        assert!(low == 0.0 && high < 0.04, "{low} {high}");
    }
}
