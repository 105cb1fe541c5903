//! Design from the requirement: sizing against the closed forms in their
//! range of validity, monotone answers, impossible and already-met targets,
//! allocation, trimming, and bad arguments.

use assert_cmd::Command;
use cmrr_budget::budget::parse_budget;
use cmrr_budget::design::{allocate, size, trimmed, Goal, Knob, KnobKind};
use cmrr_budget::engine::analyse_point;
use cmrr_budget::model::Budget;
use cmrr_budget::verdict::judge;

fn budget(chain: &str, required_db: f64) -> Budget {
    let text = format!(
        "name: sizing\nchain:\n{chain}\ninterference:\n  - {{name: hum, amplitude: 1 V rms, frequency: 50 Hz}}\nrequirement:\n  min_cmrr:\n    - {{at: 50 Hz, cmrr: {required_db} dB}}\n"
    );
    parse_budget(&text, "sizing.yaml").unwrap_or_else(|e| panic!("{e}"))
}

const GAIN_10: &str =
    "  - difference_amp: {r1: 10k ±1 %, r2: 100k ±1 %, r3: 10k ±1 %, r4: 100k ±1 %}";

fn resistor_answer(required_db: f64) -> Option<f64> {
    let b = budget(GAIN_10, required_db);
    let knob = Knob::find(&b, KnobKind::Resistors, None).unwrap();
    size(&b, &knob, Goal::WorstCase)
        .unwrap()
        .answer
        .map(|a| a.setting)
}

/// The tolerance a difference amplifier needs for a target CMRR follows
/// from CMRR = (1 + G)/(4t): t ≤ (1 + G)/(4 CMRR). Pallas-Areny and Webster,
/// "Common mode rejection ratio in differential amplifiers", IEEE Trans.
/// Instrum. Meas. 40(4), 1991. The answer is the loosest IEC 60062 class
/// within that.
#[test]
fn resistor_class_follows_the_closed_form() {
    for (required, expected) in [(60.0, 2.5e-3), (70.0, 5e-4), (80.0, 2e-4), (85.0, 1e-4)] {
        let t_max = 11.0 / (4.0 * 10f64.powf(required / 20.0));
        let answer = resistor_answer(required).unwrap();
        assert_eq!(answer, expected, "{required} dB: allowed {t_max}");
        assert!(answer <= t_max);
    }
}

#[test]
fn answers_move_monotonically_with_the_target() {
    let mut previous = f64::INFINITY;
    for required in [40.0, 50.0, 55.0, 60.0, 65.0, 70.0, 75.0, 80.0, 86.0] {
        let answer = resistor_answer(required).unwrap();
        assert!(
            answer <= previous,
            "{required} dB gave {answer} after {previous}"
        );
        previous = answer;
    }
}

#[test]
fn already_met_and_impossible_targets() {
    // Met even with the loosest class.
    assert_eq!(resistor_answer(30.0), Some(1e-2));
    // An op-amp CMRR of 90 dB caps the stage: no resistor class reaches
    // 100 dB, and the op-amp is named.
    let b = budget("  - difference_amp: {r1: 10k ±1 %, r2: 100k ±1 %, r3: 10k ±1 %, r4: 100k ±1 %, opamp: {cmrr: 90 dB}}", 100.0);
    let knob = Knob::find(&b, KnobKind::Resistors, None).unwrap();
    let sizing = size(&b, &knob, Goal::WorstCase).unwrap();
    assert!(sizing.answer.is_none());
    let blocker = sizing.blocker.expect("the op-amp blocks");
    assert_eq!(blocker.contributor, "op-amp CMRR");
    assert!((blocker.allowed_db - 100.0).abs() < 1e-6);
}

/// The first-stage gain a three-op-amp in-amp needs: with ideal op-amps the
/// CMRR is G1 times the difference stage's, so G1 ≥ CMRR_target /
/// CMRR_diff. Pallas-Areny and Webster, "Common mode rejection ratio for
/// cascaded differential amplifier stages", IEEE Trans. Instrum. Meas.
/// 40(4), 1991.
#[test]
fn first_stage_gain_follows_the_cascade_rule() {
    let chain = "  - three_opamp_inamp:\n      rg: 1k\n      rf1: 24.9k\n      rf2: 24.9k\n      difference_stage: {r1: 10k ±0.1 %, r2: 10k ±0.1 %, r3: 10k ±0.1 %, r4: 10k ±0.1 %}";
    let b = budget(chain, 90.0);
    let knob = Knob::find(&b, KnobKind::FirstStageGain, None).unwrap();
    let answer = size(&b, &knob, Goal::WorstCase).unwrap().answer.unwrap();
    let expected = 10f64.powf(90.0 / 20.0) / (2.0 / (4.0 * 1e-3));
    assert!(
        (answer.setting / expected - 1.0).abs() < 0.01,
        "{} against {expected}",
        answer.setting
    );
}

/// A single-ended pair's tail: CMRR = 1/2 + gm Z_EE with no base current,
/// so Z_EE ≥ (CMRR − 1/2)/gm. Gray, Hurst, Lewis and Meyer, Analysis and
/// Design of Analog Integrated Circuits, 5th ed., 2009, Sec. 3.5 (from
/// memory).
#[test]
fn tail_resistance_follows_the_pair_formula() {
    let chain = "  - differential_pair:\n      device: small_signal\n      gm: 20 mS\n      load_resistance: 10k\n      output: single_ended\n      tail: {resistor: 10k}";
    let b = budget(chain, 80.0);
    let knob = Knob::find(&b, KnobKind::Tail, None).unwrap();
    let answer = size(&b, &knob, Goal::WorstCase).unwrap().answer.unwrap();
    let expected = (1e4 - 0.5) / 20e-3;
    assert!(
        (answer.setting / expected - 1.0).abs() < 1e-3,
        "{} against {expected}",
        answer.setting
    );
}

#[test]
fn a_yield_target_allows_a_looser_or_equal_class() {
    let b = budget(GAIN_10, 80.0);
    let knob = Knob::find(&b, KnobKind::Resistors, None).unwrap();
    let worst = size(&b, &knob, Goal::WorstCase)
        .unwrap()
        .answer
        .unwrap()
        .setting;
    let goal = Goal::Yield {
        fraction: 0.99,
        trials: 4_000,
        seed: 5,
    };
    let at_yield = size(&b, &knob, goal).unwrap().answer.unwrap().setting;
    assert!(at_yield >= worst, "{at_yield} < {worst}");
}

#[test]
fn allocation_shares_the_allowance() {
    let b = budget(GAIN_10, 80.0);
    let tables = allocate(&judge(&b).unwrap());
    let table = &tables[0];
    assert!((table.allowed_db - 80.0).abs() < 1e-9);
    // Four equal resistors: each gets a quarter, 12.04 dB above the total.
    assert_eq!(table.rows.len(), 4);
    for row in &table.rows {
        assert!((row.allowance_db - (80.0 + 20.0 * 4f64.log10())).abs() < 1e-9);
        assert!((row.must_improve_db - (row.allowance_db - row.cmrr_db)).abs() < 1e-9);
    }
}

/// Trimming R4 to a residual r leaves one resistor's error: ε = r/(1 + G)
/// to first order, CMRR = (1 + G)/r (Pallas-Areny and Webster 1991, one
/// term of the four-resistor sum).
#[test]
fn trim_leaves_the_resolution() {
    let b = budget(GAIN_10, 80.0);
    let t = trimmed(&b, 0, 1e-5).unwrap();
    let cmrr = 1.0 / analyse_point(&t, 0.0).unwrap().worst_case();
    assert!((cmrr / (11.0 / 1e-5) - 1.0).abs() < 1e-3, "{cmrr}");
}

#[test]
fn design_commands_refuse_bad_arguments() {
    let root = env!("CARGO_MANIFEST_DIR");
    let cmrr = || Command::cargo_bin("cmrr").unwrap();
    cmrr()
        .current_dir(root)
        .args(["size", "budgets/motor-shunt.yaml", "--vary", "magic"])
        .assert()
        .code(2);
    cmrr()
        .current_dir(root)
        .args([
            "size",
            "budgets/motor-shunt.yaml",
            "--vary",
            "resistors",
            "--stage",
            "nowhere",
        ])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("no stage is labelled `nowhere`"));
    cmrr()
        .current_dir(root)
        .args([
            "size",
            "budgets/motor-shunt.yaml",
            "--vary",
            "resistors",
            "--yield",
            "150 %",
        ])
        .assert()
        .code(2);
    cmrr()
        .current_dir(root)
        .args([
            "size",
            "budgets/motor-shunt.yaml",
            "--vary",
            "first-stage-gain",
        ])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("no three-op-amp"));
    cmrr()
        .current_dir(root)
        .args(["trim", "budgets/motor-shunt.yaml", "--resolution", "lots"])
        .assert()
        .code(2);
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("no-requirement.yaml");
    std::fs::write(&file, "name: none\nchain:\n  - difference_amp: {r1: 10k ±1 %, r2: 10k ±1 %, r3: 10k ±1 %, r4: 10k ±1 %}\ninterference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}\n").unwrap();
    cmrr()
        .args(["size", file.to_str().unwrap(), "--vary", "resistors"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("no requirement"));
    // The yield ranking, when asked.
    let output = cmrr()
        .current_dir(root)
        .args([
            "improve",
            "budgets/motor-shunt.yaml",
            "--yield-trials",
            "300",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(0));
    let report: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert!(report["sensitivity"][0]["yield_gain_points"].is_number());
    cmrr()
        .current_dir(root)
        .args(["improve", "budgets/motor-shunt.yaml", "--yield-trials", "0"])
        .assert()
        .code(2);
    // The commands run on the examples.
    cmrr()
        .current_dir(root)
        .args(["improve", "budgets/motor-shunt.yaml"])
        .assert()
        .code(0);
    cmrr()
        .current_dir(root)
        .args([
            "trim",
            "budgets/load-cell-scale.yaml",
            "--resolution",
            "10 ppm",
            "--format",
            "json",
        ])
        .assert()
        .code(0);
    cmrr()
        .current_dir(root)
        .args([
            "size",
            "budgets/load-cell-scale.yaml",
            "--vary",
            "resistors",
            "--format",
            "json",
        ])
        .assert()
        .code(0)
        .stdout(predicates::str::contains("\"answer\""));
}
