//! Sweeps over frequency: the totals and every contributor's CMRR at
//! log-spaced frequencies, and where the dominant contributor changes.

use crate::engine::{analyse_point_at, EngineError, PointAnalysis};
use crate::model::Budget;
use rayon::prelude::*;

/// The most frequencies one sweep may hold; a larger request is refused
/// rather than filling memory.
pub const MAX_SWEEP_POINTS: usize = 100_000;

/// Contributions within this fraction of the largest count as tied.
pub const TIE: f64 = 1e-3;
/// A new dominant contributor must exceed the previous one by this fraction
/// (about 0.1 dB) before a change is reported.
pub const HANDOVER: f64 = 0.0116;

/// Default sweep: 0.1 Hz to 1 MHz.
pub const DEFAULT_FROM_HZ: f64 = 0.1;
/// Default upper end.
pub const DEFAULT_TO_HZ: f64 = 1e6;
/// Default density.
pub const DEFAULT_PER_DECADE: u32 = 20;

/// A log-spaced frequency range.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SweepSpec {
    /// Lowest frequency, Hz (above zero).
    pub from_hz: f64,
    /// Highest frequency, Hz.
    pub to_hz: f64,
    /// Points per decade.
    pub per_decade: u32,
}

impl Default for SweepSpec {
    fn default() -> SweepSpec {
        SweepSpec {
            from_hz: DEFAULT_FROM_HZ,
            to_hz: DEFAULT_TO_HZ,
            per_decade: DEFAULT_PER_DECADE,
        }
    }
}

/// Why a sweep range is not usable.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SweepError {
    /// The range is empty, reversed or not positive.
    #[error("the sweep range {from_hz} Hz to {to_hz} Hz is not usable: it needs 0 < from < to")]
    BadRange {
        /// Lowest frequency given.
        from_hz: f64,
        /// Highest frequency given.
        to_hz: f64,
    },
    /// No points per decade.
    #[error("a sweep needs at least one point per decade")]
    NoPoints,
    /// Too many points.
    #[error("the sweep would hold {points} frequencies; at most {MAX_SWEEP_POINTS} are allowed (fewer points per decade, or a narrower range)")]
    TooManyPoints {
        /// How many it would hold.
        points: usize,
    },
}

impl SweepSpec {
    /// Check the range and return its frequencies, both ends included.
    pub fn frequencies(&self) -> Result<Vec<f64>, SweepError> {
        if !(self.from_hz > 0.0 && self.to_hz > self.from_hz && self.to_hz.is_finite()) {
            return Err(SweepError::BadRange {
                from_hz: self.from_hz,
                to_hz: self.to_hz,
            });
        }
        if self.per_decade == 0 {
            return Err(SweepError::NoPoints);
        }
        let decades = (self.to_hz / self.from_hz).log10();
        let steps = (decades * f64::from(self.per_decade)).ceil();
        if !steps.is_finite() || steps + 1.0 > MAX_SWEEP_POINTS as f64 {
            return Err(SweepError::TooManyPoints {
                points: if steps.is_finite() {
                    steps as usize + 1
                } else {
                    usize::MAX
                },
            });
        }
        let steps = steps as usize;
        Ok((0..=steps)
            .map(|i| {
                if i == steps {
                    self.to_hz
                } else {
                    self.from_hz * 10f64.powf(i as f64 / f64::from(self.per_decade))
                }
            })
            .collect())
    }
}

/// One contributor's identity in a sweep.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SweepContributor {
    /// Its name (`nominal imbalance` for the systematic part).
    pub name: String,
    /// Its stage's label.
    pub stage: String,
}

/// The sweep's result at one frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepPoint {
    /// The frequency, Hz.
    pub freq_hz: f64,
    /// Worst-case conversion |ε|.
    pub worst_case: f64,
    /// RSS conversion.
    pub rss: f64,
    /// Nominal conversion.
    pub nominal: f64,
    /// Each contributor's |Δε|, in [`Sweep::contributors`] order (the first
    /// is the nominal imbalance).
    pub contributions: Vec<f64>,
}

impl SweepPoint {
    /// The index of the largest contribution, if any is above zero. Parts
    /// that tie (within [`TIE`]), such as the two legs of a symmetric
    /// network, resolve to the first in contributor order.
    pub fn dominant(&self) -> Option<usize> {
        let largest = self.contributions.iter().copied().fold(0.0, f64::max);
        if largest <= 0.0 {
            return None;
        }
        self.contributions
            .iter()
            .position(|m| *m >= largest * (1.0 - TIE))
    }
}

/// A change of the dominant contributor between two sweep points.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DominantChange {
    /// The geometric mean of the two points' frequencies, Hz.
    pub near_hz: f64,
    /// The contributor that dominated below.
    pub from: String,
    /// The contributor that dominates above.
    pub to: String,
}

/// A whole sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    /// The range swept.
    pub spec: SweepSpec,
    /// Contributors, the nominal imbalance first.
    pub contributors: Vec<SweepContributor>,
    /// One entry per frequency, ascending.
    pub points: Vec<SweepPoint>,
}

impl Sweep {
    /// Where the dominant contributor changes, in ascending frequency. A
    /// change counts only when the newcomer exceeds the incumbent by more
    /// than [`HANDOVER`] (about 0.1 dB), so near-equal parts trading places
    /// do not flood the list.
    pub fn dominant_changes(&self) -> Vec<DominantChange> {
        let mut changes = Vec::new();
        let mut current: Option<usize> = None;
        let mut previous_freq = 0.0;
        for point in &self.points {
            let Some(leader) = point.dominant() else {
                continue;
            };
            match current {
                None => current = Some(leader),
                Some(incumbent) if incumbent != leader => {
                    let held = point.contributions[incumbent];
                    if point.contributions[leader] > held * (1.0 + HANDOVER) {
                        changes.push(DominantChange {
                            near_hz: (previous_freq * point.freq_hz).sqrt(),
                            from: self.label(incumbent),
                            to: self.label(leader),
                        });
                        current = Some(leader);
                    }
                }
                Some(_) => {}
            }
            previous_freq = point.freq_hz;
        }
        changes
    }

    /// A contributor's name with its stage.
    pub fn label(&self, index: usize) -> String {
        let c = &self.contributors[index];
        format!("{} ({})", c.name, c.stage)
    }
}

/// Solve the budget at every frequency of `spec`, at the reference
/// temperature.
pub fn run_sweep(budget: &Budget, spec: SweepSpec) -> Result<Sweep, SweepFailure> {
    run_sweep_at(budget, spec, 0.0)
}

/// Solve the budget at every frequency of `spec`, `delta_t` kelvin from the
/// reference temperature.
pub fn run_sweep_at(budget: &Budget, spec: SweepSpec, delta_t: f64) -> Result<Sweep, SweepFailure> {
    let frequencies = spec.frequencies()?;
    let contributors = contributor_list(budget);
    // Frequencies are independent: solve them on every core. `collect`
    // keeps their order, so the result does not depend on scheduling.
    let points = frequencies
        .par_iter()
        .map(|&f| analyse_point_at(budget, f, delta_t).map(|a| sweep_point(&a)))
        .collect::<Result<Vec<_>, _>>()?;
    Ok(Sweep {
        spec,
        contributors,
        points,
    })
}

/// Why a sweep could not run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SweepFailure {
    /// The range is not usable.
    #[error(transparent)]
    Range(#[from] SweepError),
    /// The chain has no solution somewhere in the range.
    #[error(transparent)]
    Engine(#[from] EngineError),
}

/// The nominal imbalance, then every varying parameter in parameter order.
fn contributor_list(budget: &Budget) -> Vec<SweepContributor> {
    let mut list = vec![SweepContributor {
        name: "nominal imbalance".into(),
        stage: "whole chain".into(),
    }];
    list.extend(
        budget
            .parameters
            .iter()
            .filter(|(_, p)| p.varies())
            .map(|(_, p)| SweepContributor {
                name: p.name.clone(),
                stage: budget.chain[p.stage].label.clone(),
            }),
    );
    list
}

fn sweep_point(analysis: &PointAnalysis) -> SweepPoint {
    let mut contributions = Vec::with_capacity(analysis.contributions.len() + 1);
    contributions.push(analysis.nominal_magnitude());
    contributions.extend(analysis.contributions.iter().map(|c| c.magnitude()));
    SweepPoint {
        freq_hz: analysis.freq_hz,
        worst_case: analysis.worst_case(),
        rss: analysis.rss(),
        nominal: analysis.nominal_magnitude(),
        contributions,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_range_has_141_points() {
        let f = SweepSpec::default().frequencies().unwrap();
        assert_eq!(f.len(), 141);
        assert!((f[0] - 0.1).abs() < 1e-15 && (f[140] - 1e6).abs() < 1e-6);
        assert!((f[20] - 1.0).abs() < 1e-12);
    }

    #[test]
    fn bad_ranges_are_refused() {
        let bad = |from_hz, to_hz, per_decade| {
            SweepSpec {
                from_hz,
                to_hz,
                per_decade,
            }
            .frequencies()
        };
        assert!(matches!(
            bad(0.0, 1e3, 10),
            Err(SweepError::BadRange { .. })
        ));
        assert!(matches!(
            bad(1e3, 10.0, 10),
            Err(SweepError::BadRange { .. })
        ));
        assert!(matches!(bad(1.0, 1e3, 0), Err(SweepError::NoPoints)));
        assert!(matches!(
            bad(1e-3, 1e9, 10_000),
            Err(SweepError::TooManyPoints { .. })
        ));
    }
}
