//! The verdict: each finding of issue 10 as a regression test, named after
//! it, and the checks of the judgement against outside formulas.

use assert_cmd::Command;
use cmrr_budget::budget::{load_budget, parse_budget};
use cmrr_budget::design::{
    null_trimmed, sensitivity, size, trimmed, Goal, Knob, KnobKind, TrimMethod,
};
use cmrr_budget::model::Budget;
use cmrr_budget::montecarlo::production::production_yield;
use cmrr_budget::montecarlo::{TemperatureMode, YieldOptions};
use cmrr_budget::report::compare::build_compare_report;
use cmrr_budget::report::Render;
use cmrr_budget::verdict::{judge, CheckKind, Status};
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

fn example(name: &str) -> Budget {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("budgets")
        .join(name);
    load_budget(&path).unwrap_or_else(|e| panic!("{e}"))
}

fn parse(text: &str) -> Budget {
    parse_budget(text, "inline.yaml").unwrap_or_else(|e| panic!("{e}"))
}

fn cmrr() -> Command {
    let mut command = Command::cargo_bin("cmrr").unwrap();
    command.current_dir(env!("CARGO_MANIFEST_DIR"));
    command
}

/// A DC error's rms and peak are its magnitude (common practice, no
/// source): a DC source's error is compared with an rms limit as it is,
/// not divided by √2 as if it were a sine.
#[test]
fn issue_10_dc_error_is_not_judged_as_a_sine() {
    let b = parse(
        "name: dc\nchain:\n  - difference_amp: {r1: 10k ±0.1 %, r2: 100k ±0.1 %, r3: 10k ±0.1 %, r4: 100k ±0.1 %}\ninterference:\n  - {name: bridge common mode, amplitude: 2.5 V, frequency: DC, max_error: 80 uV rms}\n",
    );
    let report = judge(&b).unwrap();
    let source = &report.results[0];
    let error = source.judged.error_rti_v.unwrap();
    let check = &source.requirement.as_ref().unwrap().checks[0];
    let expected_margin = 20.0 * (80e-6 / error).log10();
    assert!((check.margin_db.0 - expected_margin).abs() < 1e-9);
    assert_eq!(
        check.achieved,
        format!(
            "error RTI {} rms",
            cmrr_budget::quantity::format_si(error, "V")
        )
    );
    // The same allowance in the Monte Carlo: the worst corner's error is
    // within a hair of the linear bound, so a limit between them splits.
    assert!(error > 80e-6, "{error}");
    assert!(!check.met);
}

/// A peak-to-peak limit means nothing for a constant: refused, naming the
/// source and the limit.
#[test]
fn issue_10_peak_to_peak_limit_on_a_dc_source_is_refused() {
    let text = "name: pp\nchain:\n  - difference_amp: {r1: 10k ±0.1 %, r2: 100k ±0.1 %, r3: 10k ±0.1 %, r4: 100k ±0.1 %}\ninterference:\n  - {name: bridge common mode, amplitude: 2.5 V, frequency: DC}\nrequirement:\n  max_error: 10 uV pp\n";
    let error = parse_budget(text, "pp.yaml").unwrap_err().to_string();
    assert!(error.contains("requirement.max_error"), "{error}");
    assert!(error.contains("bridge common mode"), "{error}");
    assert!(error.contains("peak-to-peak"), "{error}");
}

/// compare shows the CMRR its margin is judged on, at the same temperature.
#[test]
fn issue_10_compare_does_not_mix_temperatures() {
    for name in [
        "bridge-three-opamp.yaml",
        "load-cell-scale.yaml",
        "motor-shunt.yaml",
    ] {
        let report = judge(&example(name)).unwrap();
        let comparison = build_compare_report(&[(name.to_string(), &report)]);
        for (row, result) in comparison.rows.iter().zip(&report.results) {
            let figures = row.designs[0].as_ref().unwrap();
            assert_eq!(figures.cmrr_db, result.judged.cmrr_db, "{name}");
            assert_eq!(figures.temperature_k, result.judged.temperature_k);
            if let Some(outcome) = &result.requirement {
                assert_eq!(figures.margin_db, Some(outcome.margin_db));
                for check in &outcome.checks {
                    if let CheckKind::MinimumCmrr { minimum_db } = check.kind {
                        assert!(
                            (figures.cmrr_db.0 - minimum_db.0 - check.margin_db.0).abs() < 1e-9
                        );
                    }
                }
            }
        }
    }
}

/// The integrated in-amp example's output leaves its swing: every command
/// says its figures do not hold.
#[test]
fn issue_10_headroom_findings_reach_every_command() {
    let b = example("bridge-integrated-inamp.yaml");
    let report = judge(&b).unwrap();
    assert_eq!(report.verdict.status, Status::DoesNotHold);
    assert_eq!(report.verdict.met, Some(false));
    let comparison = build_compare_report(&[("a".into(), &report)]);
    assert_eq!(comparison.designs[0].status, Status::DoesNotHold);
    let options = YieldOptions {
        trials: 500,
        seed: 1,
        temperature: TemperatureMode::Drawn,
    };
    let (production, _) = production_yield(&b, options, &|_| {}, &AtomicBool::new(false)).unwrap();
    assert_eq!(production.status, Status::DoesNotHold);
    assert_eq!(production.overall_yield.unwrap().passed, 0);
    assert!(!production.headroom.is_empty());
    assert!(production.table().contains("WARNING (headroom)"));
    // size: no setting of a knob that leaves the output where it is holds.
    let knob = Knob::find(&b, KnobKind::SourceImbalance, None).unwrap();
    let sizing = size(&b, &knob, Goal::WorstCase).unwrap();
    assert!(sizing.steps.iter().all(|s| !s.holds && !s.meets));
    assert!(sizing.answer.is_none());
    // improve carries the findings.
    let output = cmrr()
        .args(["improve", "budgets/bridge-integrated-inamp.yaml"])
        .assert()
        .code(0);
    let text = String::from_utf8(output.get_output().stdout.clone()).unwrap();
    assert!(text.contains("does not hold"), "{text}");
}

/// A gain at which the stages saturate is not an answer.
#[test]
fn issue_10_size_never_answers_a_setting_that_saturates() {
    let b = example("bridge-three-opamp.yaml");
    let knob = Knob::find(&b, KnobKind::FirstStageGain, None).unwrap();
    let sizing = size(&b, &knob, Goal::WorstCase).unwrap();
    assert!(!sizing.steps[0].holds, "G1 = 10,000 must not hold");
    assert!(sizing.steps.iter().all(|s| s.holds || !s.meets));
    assert!(sizing.steps.iter().any(|s| s.holds));
    // With a looser requirement a gain does meet it, and it holds.
    let mut relaxed = b.clone();
    relaxed.requirement.as_mut().unwrap().min_cmrr[0].cmrr_db = 80.5;
    relaxed.requirement.as_mut().unwrap().max_error = None;
    relaxed.interference[0].max_error = None;
    let sizing = size(&relaxed, &knob, Goal::WorstCase).unwrap();
    let answer = sizing
        .answer
        .clone()
        .unwrap_or_else(|| panic!("80.5 dB is reachable: {sizing:?}"));
    assert!(answer.holds && answer.meets);
    let check = judge(&knob.apply(&relaxed, answer.setting)).unwrap();
    assert!(check.headroom.is_empty());
}

/// improve ranks by the figure the requirement judges, over temperature,
/// so the resistors' drift counts.
#[test]
fn issue_10_improve_counts_drift() {
    let b = example("bridge-three-opamp.yaml");
    let ranked = sensitivity(&b, None).unwrap();
    let hum = b
        .interference
        .iter()
        .position(|s| s.name == "mains hum on the cable")
        .unwrap();
    let drift = ranked.iter().find(|s| s.parameter == "R1 TC").unwrap();
    assert!(drift.gain_db[hum] > 0.05, "{:?}", drift.gain_db);
}

/// TCR tracking is read where the CMRR is set (the difference stage) and
/// printed as written.
#[test]
fn issue_10_tracking_as_written() {
    let b = parse(
        "name: tracking\ntemperature: {reference: 25 degC, range: [0 degC, 70 degC]}\nchain:\n  - three_opamp_inamp:\n      rg: 1k ±0.1 %\n      rf1: 24.9k ±0.1 %\n      rf2: 24.9k ±0.1 %\n      tcr: 50 ppm/K\n      difference_stage:\n        r1: 10k\n        r2: 10k\n        r3: 10k\n        r4: 10k\n        network: {ratio_tolerance: 0.02 %, tcr: 25 ppm/K, tracking: 2 ppm/K}\ninterference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}\nrequirement:\n  min_cmrr: [{at: 50 Hz, cmrr: 100 dB}]\n",
    );
    let knob = Knob::find(&b, KnobKind::Tracking, None).unwrap();
    let sizing = size(&b, &knob, Goal::WorstCase).unwrap();
    assert_eq!(sizing.current.as_deref(), Some("2.00 ppm/K"));
    for id in knob.params() {
        let p = b.parameters.get(id);
        assert!(p.field.contains(".difference_stage."), "{}", p.field);
    }
    let shipped = example("bridge-three-opamp.yaml");
    let knob = Knob::find(&shipped, KnobKind::Tracking, None).unwrap();
    let sizing = size(&shipped, &knob, Goal::WorstCase).unwrap();
    assert_eq!(sizing.current.as_deref(), Some("25.0 ppm/K"));
}

/// Temperature coefficients print in ppm/K, in every command.
#[test]
fn issue_10_temperature_coefficients_print_in_ppm_per_kelvin() {
    let report = judge(&example("bridge-three-opamp.yaml")).unwrap();
    let json = report.json();
    assert!(json.contains("±25.0 ppm/K"), "no TC in the JSON");
    assert!(!json.contains("µppm"));
    let output = cmrr()
        .args([
            "yield",
            "budgets/bridge-three-opamp.yaml",
            "--trials",
            "200",
            "--format",
            "json",
        ])
        .assert()
        .code(0);
    let text = String::from_utf8(output.get_output().stdout.clone()).unwrap();
    assert!(!text.contains("µppm"));
}

/// The full-scale error is a peak figure and says so; shares are of the
/// worst-case sum; a yield gained is in percentage points.
#[test]
fn issue_10_labels_say_what_a_figure_is() {
    let table = judge(&example("load-cell-scale.yaml")).unwrap().table();
    assert!(table.contains("peak error of full scale"));
    assert!(table.contains("share of worst case"));
    let output = cmrr()
        .args([
            "improve",
            "budgets/load-cell-scale.yaml",
            "--yield-trials",
            "100",
        ])
        .assert()
        .code(0);
    let text = String::from_utf8(output.get_output().stdout.clone()).unwrap();
    assert!(text.contains("yield gained (percentage points)"), "{text}");
    assert!(text.contains("share of the worst-case sum"), "{text}");
}

/// Every value the help offers is one the program takes.
#[test]
fn issue_10_help_offers_only_what_runs() {
    for command in ["size", "improve", "trim"] {
        let mut args = vec![
            command,
            "budgets/bridge-three-opamp.yaml",
            "--format",
            "csv",
        ];
        match command {
            "size" => args.extend(["--vary", "resistors"]),
            "trim" => args.extend(["--resolution", "10 ppm"]),
            _ => {}
        }
        let output = cmrr().args(&args).output().unwrap();
        assert_eq!(output.status.code(), Some(0), "{command}");
        let csv = String::from_utf8(output.stdout).unwrap();
        assert!(csv.lines().count() > 1, "{command}: {csv}");
    }
    let help = cmrr().args(["sweep", "--help"]).output().unwrap();
    let help = String::from_utf8(help.stdout).unwrap();
    assert!(!help.contains("drawn"), "{help}");
    cmrr()
        .args([
            "sweep",
            "budgets/bridge-three-opamp.yaml",
            "--temperature",
            "drawn",
        ])
        .assert()
        .code(2);
    let help = cmrr().args(["improve", "--help"]).output().unwrap();
    let help = String::from_utf8(help.stdout).unwrap();
    assert!(help.contains("csv"));
}

/// Two conversions in quadrature add as vectors: at the worst corner
/// |ε| = √(a² + b²) where the linear bound says a + b (common practice,
/// no source). A difference stage's resistor mismatch converts in phase
/// (a real ε); an input-capacitance mismatch behind a source resistance
/// converts as jωRsΔC/(1 + jωRsC)², at 90° to it while ωRsC ≪ 1 (the
/// divider of Huhta and Webster, "60-Hz interference in
/// electrocardiography", IEEE Trans. Biomed. Eng. 20(2), 1973), so the
/// exact corner beats the bound by up to 3 dB and a budget may be judged
/// on it.
#[test]
fn issue_10_worst_corner_is_exact_where_the_bound_adds_out_of_phase() {
    let text = |judged: &str| {
        format!(
            "name: quadrature\nchain:\n  - source:\n      resistance: 1k\n      input_capacitance: 1 nF ±1 %\n  - difference_amp: {{r1: 100k ±0.01 %, r2: 100k ±0.01 %, r3: 100k ±0.01 %, r4: 100k ±0.01 %}}\ninterference:\n  - {{name: hum, amplitude: 1 V rms, frequency: 1 kHz}}\nrequirement:\n  judged_on: {judged}\n  min_cmrr: [{{at: 1 kHz, cmrr: 60 dB}}]\n"
        )
    };
    let report = judge(&parse(&text("worst_case"))).unwrap();
    let result = &report.results[0];
    let corner = &result.corner;
    let spread = corner.phase_spread_deg.unwrap();
    assert!(spread > 85.0, "{spread}°");
    // Magnitudes of the two in-phase pairs (a, b), from the contributions.
    let sum = |prefix: &str| -> f64 {
        result
            .contributions
            .iter()
            .filter(|c| c.name.starts_with(prefix))
            .map(|c| c.cmrr_db.conversion())
            .sum()
    };
    let (a, b) = (sum("R"), sum("input C"));
    assert!(a > 0.0 && b > 0.0);
    let vector = Db::from((a * a + b * b).sqrt());
    assert!(
        (corner.cmrr_db.0 - vector).abs() < 0.05,
        "{} {}",
        corner.cmrr_db.0,
        vector
    );
    assert!(corner.cmrr_db.0 - corner.linear_bound_db.0 > 2.5);
    assert!(corner.why_they_differ.as_ref().unwrap().contains("apart"));
    // Judged on the corner, the margin is the corner's.
    let report = judge(&parse(&text("worst_corner"))).unwrap();
    let outcome = report.results[0].requirement.as_ref().unwrap();
    assert!((outcome.margin_db.0 - (report.results[0].corner.cmrr_db.0 - 60.0)).abs() < 1e-9);
}

/// The CMRR in dB of a conversion.
struct Db;
impl Db {
    fn from(conversion: f64) -> f64 {
        -20.0 * conversion.log10()
    }
}

/// A null trim cancels every DC conversion, the op-amp's own included; a
/// ratio trim leaves the op-amp's. With R4 off its null by δ, the exact
/// common-mode gain (R1 R4 − R2 R3)/(R1 (R3 + R4)) of a difference stage
/// of gain G is δ G/(1 + G), so ε = δ/(1 + G) and CMRR = (1 + G)/δ
/// (Pallas-Areny and Webster, "Common mode rejection ratio in differential
/// amplifiers", IEEE Trans. Instrum. Meas. 40(4), 1991, with one resistor
/// in error).
#[test]
fn issue_10_null_trim_cancels_the_opamp_dc_conversion() {
    let b = parse(
        "name: trim\nchain:\n  - difference_amp: {r1: 10k ±0.1 %, r2: 100k ±0.1 %, r3: 10k ±0.1 %, r4: 100k ±0.1 %, opamp: {cmrr: 80 dB}}\ninterference:\n  - {name: offset, amplitude: 2.5 V, frequency: DC}\n",
    );
    let resolution = 1e-6;
    let null = judge(&null_trimmed(&b, 0, resolution).unwrap()).unwrap();
    let expected = 20.0 * (11.0 / resolution).log10();
    let achieved = null.results[0].cmrr_db.worst_case.0;
    assert!(
        (achieved - expected).abs() < 0.1,
        "{achieved} against {expected}"
    );
    let ratio = judge(&trimmed(&b, 0, resolution).unwrap()).unwrap();
    let achieved = ratio.results[0].cmrr_db.worst_case.0;
    assert!(achieved < 80.1, "{achieved}");
    assert_ne!(
        TrimMethod::Null.explanation(),
        TrimMethod::Ratio.explanation()
    );
}
