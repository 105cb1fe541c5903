//! The `cmrr` command end to end: every example budget, the output formats
//! and the output-file rules. (Every invalid budget's whole message is
//! pinned by the golden corpus, `tests/golden.rs`.)

use assert_cmd::Command;
use std::fs;
use std::path::{Path, PathBuf};

fn cmrr() -> Command {
    Command::cargo_bin("cmrr").expect("the cmrr binary is built")
}

fn repository() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn yaml_files(folder: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = fs::read_dir(folder)
        .expect("folder exists")
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
        .collect();
    files.sort();
    files
}

/// The exit status each example must give: 0 met (or no requirement),
/// 1 missed. A new example must be added here.
fn expected_status(name: &str) -> i32 {
    match name {
        "load-cell-scale.yaml" => 0,
        "motor-shunt.yaml" => 1,
        "bridge-three-opamp.yaml" => 1,
        // Its output leaves the swing (headroom), so its figures do not
        // hold and the verdict fails (issue 10).
        "bridge-integrated-inamp.yaml" => 1,
        "bjt-pair-resistor-tail.yaml" => 1,
        "bjt-pair-current-source-tail.yaml" => 1,
        "ecg-electrodes.yaml" => 1,
        other => panic!("example {other} has no expected exit status in tests/cli.rs"),
    }
}

#[test]
fn every_example_runs_in_every_format() {
    let examples = yaml_files(&repository().join("budgets"));
    assert!(examples.len() >= 2);
    for example in examples {
        let name = example.file_name().unwrap().to_string_lossy().to_string();
        let status = expected_status(&name);
        let relative = format!("budgets/{name}");
        let table = cmrr()
            .current_dir(repository())
            .args(["budget", &relative])
            .assert()
            .code(status);
        let text = String::from_utf8(table.get_output().stdout.clone()).unwrap();
        assert!(text.contains("CMRR budget:"), "{name}");
        assert!(text.contains("worst case"), "{name}");
        assert!(!text.contains("NaN"), "{name}: {text}");

        let json = cmrr()
            .current_dir(repository())
            .args(["budget", &relative, "--format", "json"])
            .assert()
            .code(status);
        let report: serde_json::Value = serde_json::from_slice(&json.get_output().stdout).unwrap();
        check_json_contract(&report, &name);

        let csv = cmrr()
            .current_dir(repository())
            .args(["budget", &relative, "--format", "csv"])
            .assert()
            .code(status);
        let csv = String::from_utf8(csv.get_output().stdout.clone()).unwrap();
        let mut lines = csv.lines();
        let header = lines.next().unwrap();
        assert!(
            header.contains("frequency_hz")
                && header.contains("cmrr_db")
                && header.contains("error_rti_v")
        );
        let columns = header.split(',').count();
        assert!(lines.count() > 3);
        for line in csv.lines().filter(|l| !l.contains('"')) {
            assert_eq!(line.split(',').count(), columns, "{name}: {line}");
        }

        cmrr()
            .current_dir(repository())
            .args(["check", &relative])
            .assert()
            .code(0)
            .stdout(predicates::str::contains("valid budget"));
    }
}

/// The fields the README promises in the JSON report.
fn check_json_contract(report: &serde_json::Value, name: &str) {
    assert_eq!(report["schema_version"], 2, "{name}");
    assert!(report["budget"].is_string(), "{name}");
    let results = report["results"].as_array().expect("results is a list");
    assert!(!results.is_empty(), "{name}");
    for result in results {
        for field in [
            "source",
            "frequency_hz",
            "amplitude_v",
            "cmrr_db",
            "error_rti_v",
            "contributions",
        ] {
            assert!(!result[field].is_null(), "{name}: {field} missing");
        }
        assert!(
            result.get("requirement").is_some(),
            "{name}: requirement key missing"
        );
        for total in ["worst_case", "rss", "nominal"] {
            let cmrr = &result["cmrr_db"][total];
            assert!(
                cmrr.is_number() || cmrr == "inf",
                "{name}: cmrr_db.{total} = {cmrr}"
            );
            assert!(result["error_rti_v"][total].is_number(), "{name}");
        }
        for contribution in result["contributions"].as_array().unwrap() {
            for field in ["name", "stage", "cmrr_db", "error_rti_v", "share"] {
                assert!(
                    !contribution[field].is_null(),
                    "{name}: contribution {field}"
                );
            }
        }
        if let Some(requirement) = result["requirement"].as_object() {
            assert!(requirement["met"].is_boolean());
            assert!(requirement["margin_db"].is_number() || requirement["margin_db"] == "inf");
        }
    }
}

#[test]
fn missing_file_and_bad_usage_exit_2() {
    cmrr()
        .args(["budget", "no/such/budget.yaml"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains(
            "cannot read budget file no/such/budget.yaml",
        ));
    cmrr().args(["budget"]).assert().code(2);
    cmrr().args(["frobnicate"]).assert().code(2);
    cmrr()
        .current_dir(repository())
        .args(["budget", "budgets/load-cell-scale.yaml", "--format", "xml"])
        .assert()
        .code(2);
}

#[test]
fn output_file_is_written_whole_and_never_clobbered() {
    let dir = tempfile::tempdir().unwrap();
    let budget = dir.path().join("design.yaml");
    fs::copy(repository().join("budgets/load-cell-scale.yaml"), &budget).unwrap();
    let original = fs::read_to_string(&budget).unwrap();
    let report = dir.path().join("report.json");

    cmrr()
        .args([
            "budget",
            budget.to_str().unwrap(),
            "--format",
            "json",
            "-o",
            report.to_str().unwrap(),
        ])
        .assert()
        .code(0)
        .stdout("");
    let written: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(&report).unwrap()).unwrap();
    assert_eq!(written["schema_version"], 2);

    // An existing report is kept unless --force.
    fs::write(&report, "keep me").unwrap();
    cmrr()
        .args([
            "budget",
            budget.to_str().unwrap(),
            "-o",
            report.to_str().unwrap(),
        ])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("already exists; add --force"));
    assert_eq!(fs::read_to_string(&report).unwrap(), "keep me");
    cmrr()
        .args([
            "budget",
            budget.to_str().unwrap(),
            "-o",
            report.to_str().unwrap(),
            "--force",
        ])
        .assert()
        .code(0);
    assert!(fs::read_to_string(&report).unwrap().contains("CMRR budget"));

    // The budget file itself is never the output, even with --force.
    cmrr()
        .args([
            "budget",
            budget.to_str().unwrap(),
            "-o",
            budget.to_str().unwrap(),
            "--force",
        ])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("is the budget file itself"));
    assert_eq!(fs::read_to_string(&budget).unwrap(), original);

    // A folder that does not exist is an error, not a silent loss.
    let nowhere = dir.path().join("missing-folder/report.csv");
    cmrr()
        .args([
            "budget",
            budget.to_str().unwrap(),
            "-o",
            nowhere.to_str().unwrap(),
        ])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("cannot write the report"));
    // No temporary file is left behind.
    let leftovers: Vec<_> = fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".partial"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

#[test]
fn hazardous_and_patient_budgets_carry_cautions() {
    let dir = tempfile::tempdir().unwrap();
    let hazardous = dir.path().join("hazardous.yaml");
    fs::write(
        &hazardous,
        "name: high-side shunt\nchain:\n  - difference_amp: {r1: 100k, r2: 10k, r3: 100k, r4: 10k}\ninterference:\n  - {name: bus switching, amplitude: 400 V pp, frequency: 20 kHz}\n",
    )
    .unwrap();
    cmrr()
        .args(["budget", hazardous.to_str().unwrap()])
        .assert()
        .code(0)
        .stdout(predicates::str::contains(
            "CAUTION: the common mode of `bus switching`",
        ))
        .stdout(predicates::str::contains(
            "local electrical codes and licensed practice",
        ));

    let patient = dir.path().join("patient.yaml");
    fs::write(
        &patient,
        "name: electrode amplifier\npatient_connected: true\nchain:\n  - difference_amp: {r1: 10k, r2: 10k, r3: 10k, r4: 10k}\ninterference:\n  - {name: body hum, amplitude: 1 V rms, frequency: 50 Hz}\n",
    )
    .unwrap();
    let output = cmrr()
        .args(["budget", patient.to_str().unwrap(), "--format", "json"])
        .assert()
        .code(0);
    let report: serde_json::Value = serde_json::from_slice(&output.get_output().stdout).unwrap();
    let cautions = report["cautions"].as_array().unwrap();
    assert!(cautions
        .iter()
        .any(|c| c.as_str().unwrap().contains("patient-connected")));
    // A matched ideal stage: infinite CMRR is written "inf".
    assert_eq!(report["results"][0]["cmrr_db"]["worst_case"], "inf");
}

/// Issue 3: a limit set on an interference source alone, with no
/// requirement section, was ignored; it must be checked and decide the exit
/// status.
#[test]
fn issue_3_source_limit_without_requirement_section() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("limit.yaml");
    fs::write(
        &file,
        "name: own limit\nchain:\n  - difference_amp: {r1: 10k ±1 %, r2: 10k ±1 %, r3: 10k ±1 %, r4: 10k ±1 %}\ninterference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz, max_error: 1 uV rms}\n",
    )
    .unwrap();
    cmrr()
        .args(["budget", file.to_str().unwrap()])
        .assert()
        .code(1)
        .stdout(predicates::str::contains("error RTI ≤ 1.00 µV rms"));
}

#[test]
fn new_stage_examples_report_their_facts() {
    let run = |name: &str| {
        let output = cmrr()
            .current_dir(repository())
            .args(["budget", &format!("budgets/{name}"), "--format", "json"])
            .output()
            .unwrap();
        serde_json::from_slice::<serde_json::Value>(&output.stdout).unwrap()
    };
    let pair = run("bjt-pair-current-source-tail.yaml");
    let facts = pair["facts"].as_array().unwrap();
    assert!(facts
        .iter()
        .any(|f| f.as_str().unwrap().contains("tail output resistance")));
    let integrated = run("bridge-integrated-inamp.yaml");
    // Bias current through 175 Ω + 100 Ω per leg (each ±0.1 %): 2 nA × 0.55 Ω
    // of worst imbalance plus 0.5 nA × 550.55 Ω (Ohm's law; common
    // practice, no source).
    let facts = integrated["facts"].as_array().unwrap();
    assert!(
        facts.iter().any(|f| f
            .as_str()
            .unwrap()
            .contains("leaves up to 276 nV of offset")),
        "{facts:?}"
    );
    let findings = integrated["headroom"].as_array().unwrap();
    assert!(
        findings.iter().any(|f| f["node"] == "output"),
        "{findings:?}"
    );
    assert!(integrated["results"][0]["error_lsb"]["worst_case"].is_number());
    assert_eq!(integrated["measurand_unit"], "kg");
    assert!(integrated["results"][0]["at_temperature"]["temperature_k"].is_number());
}
