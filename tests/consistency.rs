//! One verdict: on every example and on random variations of them,
//! `budget`, `compare`, `yield` (its worst corner), `size` (at the setting
//! as written) and `improve` agree on every figure they share, to the
//! printed digit. They all judge through `verdict::judge`; this test keeps
//! it so.

use cmrr_budget::budget::load_budget;
use cmrr_budget::design::{allocate, size, Goal, Knob, KnobKind};
use cmrr_budget::model::{Budget, Variation};
use cmrr_budget::montecarlo::production::production_yield;
use cmrr_budget::montecarlo::{TemperatureMode, YieldOptions};
use cmrr_budget::quantity::format_db;
use cmrr_budget::report::compare::build_compare_report;
use cmrr_budget::verdict::judge;
use rand::{Rng, SeedableRng};
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

fn examples() -> Vec<(String, Budget)> {
    let folder = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("budgets");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&folder)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|f| {
            let name = f.file_name().unwrap().to_string_lossy().into_owned();
            (name, load_budget(&f).unwrap())
        })
        .collect()
}

/// A variation of `budget`: every spread scaled by its own random factor
/// between a fifth and three times, tolerances kept below 50 %.
fn varied(budget: &Budget, rng: &mut impl Rng) -> Budget {
    let mut out = budget.clone();
    let ids: Vec<_> = out.parameters.iter().map(|(id, _)| id).collect();
    for id in ids {
        let factor = 0.2 + 2.8 * rng.random::<f64>();
        let p = out.parameters.get_mut(id);
        p.variation = match p.variation {
            Variation::Relative { tolerance } => Variation::Relative {
                tolerance: (tolerance * factor).min(0.5),
            },
            Variation::SignedBound { magnitude } => Variation::SignedBound {
                magnitude: magnitude * factor,
            },
            other => other,
        };
    }
    out
}

fn db(value: f64) -> String {
    format_db(value)
}

fn check_agreement(name: &str, budget: &Budget) {
    let report = judge(budget).unwrap();
    // compare shows the judged figure and the margin.
    let comparison = build_compare_report(&[(name.to_string(), &report)]);
    assert_eq!(
        comparison.designs[0].status, report.verdict.status,
        "{name}"
    );
    for (row, result) in comparison.rows.iter().zip(&report.results) {
        let f = row.designs[0].as_ref().unwrap();
        assert_eq!(db(f.cmrr_db.0), db(result.judged.cmrr_db.0), "{name}");
        assert_eq!(
            f.margin_db.map(|m| db(m.0)),
            result.requirement.as_ref().map(|o| db(o.margin_db.0)),
            "{name}"
        );
    }
    // yield's worst corner is the verdict's.
    let options = YieldOptions {
        trials: 40,
        seed: 3,
        temperature: if budget.temperature.is_some() {
            TemperatureMode::Drawn
        } else {
            TemperatureMode::Reference
        },
    };
    let (production, _) =
        production_yield(budget, options, &|_| {}, &AtomicBool::new(false)).unwrap();
    assert_eq!(production.status, report.verdict.status, "{name}");
    for f in &production.frequencies {
        assert_eq!(
            db(f.worst_corner.cmrr_db.0),
            db(report.worst_corner_at(f.frequency_hz).unwrap().cmrr_db.0),
            "{name} at {} Hz",
            f.frequency_hz
        );
    }
    // size at the setting as written judges as budget does.
    let has_requirement = report.verdict.margin_db.is_some();
    for kind in [
        KnobKind::Resistors,
        KnobKind::NetworkRatio,
        KnobKind::FilterCapacitors,
        KnobKind::SourceImbalance,
        KnobKind::Tracking,
        KnobKind::FirstStageGain,
        KnobKind::Tail,
    ] {
        let Ok(knob) = Knob::find(budget, kind, None) else {
            continue;
        };
        let Some(current) = knob.current(budget) else {
            continue;
        };
        // A class knob sets every part alike; where the parts differ, the
        // setting as written is not one the knob can take.
        let first = budget.parameters.get(knob.params()[0]).variation;
        if knob
            .params()
            .iter()
            .any(|id| budget.parameters.get(*id).variation != first)
        {
            continue;
        }
        let as_written = judge(&knob.apply(budget, current)).unwrap();
        assert_eq!(
            as_written.verdict.margin_db.map(|m| db(m.0)),
            report.verdict.margin_db.map(|m| db(m.0)),
            "{name}: {kind:?} at the setting as written"
        );
        assert_eq!(as_written.verdict.status, report.verdict.status);
        if has_requirement {
            let sizing = size(budget, &knob, Goal::WorstCase).unwrap();
            for step in sizing.steps.iter().filter(|s| s.setting == current) {
                assert_eq!(
                    step.margin_db.map(db),
                    report.verdict.margin_db.map(|m| db(m.0)),
                    "{name}: {kind:?}"
                );
            }
        }
    }
    // improve's allocation uses the judged contributions and allowance.
    let tables = allocate(&report);
    let points: Vec<_> = report
        .judged_points()
        .into_iter()
        .filter(|p| p.requirement.is_some())
        .collect();
    assert_eq!(tables.len(), points.len(), "{name}");
    for (table, point) in tables.iter().zip(&points) {
        assert_eq!(
            db(table.allowed_db),
            db(point.requirement.unwrap().allowed_cmrr_db.0)
        );
        assert_eq!(table.temperature_k, point.judged.temperature_k);
        for row in &table.rows {
            let shared = point
                .contributions
                .iter()
                .find(|c| c.name == row.contributor && c.stage == row.stage)
                .unwrap();
            assert_eq!(db(row.cmrr_db), db(shared.cmrr_db.0), "{name}");
        }
    }
}

#[test]
fn commands_agree_on_every_example() {
    for (name, budget) in examples() {
        check_agreement(&name, &budget);
    }
}

#[test]
fn commands_agree_on_random_budgets() {
    let mut rng = rand::rngs::StdRng::seed_from_u64(10);
    for (name, budget) in examples() {
        for round in 0..3 {
            let budget = varied(&budget, &mut rng);
            check_agreement(&format!("{name} (variation {round})"), &budget);
        }
    }
}
