//! Streaming statistics with flat memory: a fixed histogram of CMRR in dB
//! per frequency, pass counts, and the worst trial. Merging two is integer
//! addition and an order-free minimum, so the result does not depend on how
//! trials were spread over threads.

/// Lowest CMRR the histogram resolves, dB.
pub const HISTOGRAM_LOW_DB: f64 = -50.0;
/// Highest CMRR the histogram resolves, dB.
pub const HISTOGRAM_HIGH_DB: f64 = 350.0;
/// Bin width, dB.
pub const BIN_DB: f64 = 0.05;
const BINS: usize = ((HISTOGRAM_HIGH_DB - HISTOGRAM_LOW_DB) / BIN_DB) as usize;

/// A histogram of CMRR in dB with the worst trial seen.
#[derive(Debug, Clone, PartialEq)]
pub struct CmrrHistogram {
    bins: Vec<u32>,
    below: u64,
    above: u64,
    infinite: u64,
    count: u64,
    /// The lowest CMRR seen and the index of the trial that gave it (the
    /// lowest index among equals).
    worst: Option<(f64, u64)>,
}

impl Default for CmrrHistogram {
    fn default() -> CmrrHistogram {
        CmrrHistogram {
            bins: vec![0; BINS],
            below: 0,
            above: 0,
            infinite: 0,
            count: 0,
            worst: None,
        }
    }
}

impl CmrrHistogram {
    /// Record one trial's CMRR.
    pub fn record(&mut self, cmrr_db: f64, trial: u64) {
        self.count += 1;
        if cmrr_db.is_infinite() {
            self.infinite += 1;
        } else if cmrr_db < HISTOGRAM_LOW_DB {
            self.below += 1;
        } else if cmrr_db >= HISTOGRAM_HIGH_DB {
            self.above += 1;
        } else {
            let bin = ((cmrr_db - HISTOGRAM_LOW_DB) / BIN_DB) as usize;
            self.bins[bin.min(BINS - 1)] += 1;
        }
        let worse = match self.worst {
            None => true,
            Some((db, index)) => cmrr_db < db || (cmrr_db == db && trial < index),
        };
        if worse {
            self.worst = Some((cmrr_db, trial));
        }
    }

    /// Add another histogram's counts to this one.
    pub fn merge(&mut self, other: &CmrrHistogram) {
        for (mine, theirs) in self.bins.iter_mut().zip(&other.bins) {
            *mine += theirs;
        }
        self.below += other.below;
        self.above += other.above;
        self.infinite += other.infinite;
        self.count += other.count;
        if let Some((db, index)) = other.worst {
            let worse = match self.worst {
                None => true,
                Some((mine, mine_index)) => db < mine || (db == mine && index < mine_index),
            };
            if worse {
                self.worst = Some((db, index));
            }
        }
    }

    /// How many trials were recorded.
    pub fn count(&self) -> u64 {
        self.count
    }

    /// The worst (lowest) CMRR and its trial.
    pub fn worst(&self) -> Option<(f64, u64)> {
        self.worst
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
            return self.worst.map_or(HISTOGRAM_LOW_DB, |w| w.0);
        }
        for (bin, count) in self.bins.iter().enumerate() {
            seen += u64::from(*count);
            if seen >= target {
                return HISTOGRAM_LOW_DB + bin as f64 * BIN_DB;
            }
        }
        seen += self.above;
        if seen >= target {
            return HISTOGRAM_HIGH_DB;
        }
        f64::INFINITY
    }

    /// The counts in bins of `width_db`, from `from_db` to `to_db`, for a
    /// plot: (lower edge, count).
    pub fn rebinned(&self, from_db: f64, to_db: f64, width_db: f64) -> Vec<(f64, u64)> {
        let mut out: Vec<(f64, u64)> = Vec::new();
        let mut edge = from_db;
        while edge < to_db {
            out.push((edge, 0));
            edge += width_db;
        }
        for (bin, count) in self.bins.iter().enumerate().filter(|(_, c)| **c > 0) {
            let db = HISTOGRAM_LOW_DB + (bin as f64 + 0.5) * BIN_DB;
            if db >= from_db && db < to_db {
                let slot = ((db - from_db) / width_db) as usize;
                if let Some(entry) = out.get_mut(slot) {
                    entry.1 += u64::from(*count);
                }
            }
        }
        out
    }

    /// The lowest and highest finite CMRR recorded in the bins, dB.
    pub fn span(&self) -> Option<(f64, f64)> {
        let first = self.bins.iter().position(|c| *c > 0)?;
        let last = self.bins.iter().rposition(|c| *c > 0)?;
        Some((
            HISTOGRAM_LOW_DB + first as f64 * BIN_DB,
            HISTOGRAM_LOW_DB + (last + 1) as f64 * BIN_DB,
        ))
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
    ((centre - half).max(0.0), (centre + half).min(1.0))
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
        assert!(high > 0.999_999 && low > 0.96, "{low} {high}");
    }
}
