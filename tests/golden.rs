//! The golden corpus: every example in `budgets/`, through every command
//! that applies, in every format, rendered byte for byte against the files
//! in `tests/golden/`; every invalid example in `budgets/invalid/<kind>/`
//! against its whole rendered message (`<name>.expected` beside it). A
//! changed printed number shows in review as a changed file.
//!
//! After an intended change, refresh the files and say why in the commit:
//!
//! ```sh
//! CMRR_BLESS=1 cargo test --test golden
//! ```
//!
//! These are regression pins, not outside checks: the figures themselves
//! are checked against published sources in `published_checks.rs` and
//! against an independent nodal solve in `nodal_reference.rs`.

use assert_cmd::Command;
use std::fs;
use std::path::{Path, PathBuf};

fn repository() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn blessing() -> bool {
    std::env::var_os("CMRR_BLESS").is_some_and(|v| v == "1")
}

/// The example budgets, by file stem.
fn examples() -> Vec<String> {
    let mut names: Vec<String> = fs::read_dir(repository().join("budgets"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
        .map(|p| p.file_stem().unwrap().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

/// What a run printed, as the corpus keeps it: standard output, then (when
/// there is any) standard error after a marker line, then the exit status.
fn rendered(args: &[&str]) -> String {
    let output = Command::cargo_bin("cmrr")
        .unwrap()
        .current_dir(repository())
        .args(args)
        .output()
        .unwrap();
    let mut text = String::from_utf8(output.stdout).unwrap();
    let stderr = String::from_utf8(output.stderr).unwrap();
    if !stderr.is_empty() {
        text.push_str("--- standard error ---\n");
        text.push_str(&stderr);
    }
    text.push_str(&format!(
        "--- exit status {} ---\n",
        output.status.code().unwrap_or(-1)
    ));
    text
}

/// Compare `actual` with the file at `path` (or write it when blessing);
/// returns a description of the difference.
fn pin(path: &Path, actual: &str) -> Option<String> {
    if blessing() {
        fs::create_dir_all(path.parent().unwrap()).unwrap();
        fs::write(path, actual).unwrap();
        return None;
    }
    let expected = match fs::read_to_string(path) {
        Ok(text) => text,
        Err(_) => return Some(format!("{}: no such golden file", path.display())),
    };
    if expected == actual {
        return None;
    }
    let line = expected
        .lines()
        .zip(actual.lines())
        .position(|(a, b)| a != b)
        .unwrap_or_else(|| expected.lines().count().min(actual.lines().count()));
    Some(format!(
        "{}: differs from line {}\n  expected: {}\n  actual:   {}",
        path.display(),
        line + 1,
        expected.lines().nth(line).unwrap_or("(end)"),
        actual.lines().nth(line).unwrap_or("(end)")
    ))
}

/// Run one command over every example in every format and pin the output
/// under `tests/golden/<example>/<name>.<ext>`.
fn pin_command(name: &str, args: &[&str]) {
    let mut failures = Vec::new();
    for example in examples() {
        let file = format!("budgets/{example}.yaml");
        for (format, ext) in [("table", "txt"), ("json", "json"), ("csv", "csv")] {
            let mut full = vec![args[0], file.as_str()];
            full.extend(&args[1..]);
            full.extend(["--format", format]);
            let path = repository()
                .join("tests/golden")
                .join(&example)
                .join(format!("{name}.{ext}"));
            failures.extend(pin(&path, &rendered(&full)));
        }
    }
    assert!(
        failures.is_empty(),
        "{} golden file(s) differ; if the change is intended, run `CMRR_BLESS=1 cargo test --test golden` and say why in the commit:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

#[test]
fn golden_budget() {
    pin_command("budget", &["budget"]);
}

#[test]
fn golden_sweep() {
    pin_command("sweep", &["sweep", "--per-decade", "3"]);
}

#[test]
fn golden_yield() {
    pin_command(
        "yield",
        &["yield", "--trials", "2000", "--seed", "7", "--threads", "2"],
    );
}

/// `cmrr residue` on every example with switching sources; the waveforms
/// thinned to 64 samples per period so the pins stay small.
#[test]
fn golden_residue() {
    let mut failures = Vec::new();
    for example in examples() {
        let file = format!("budgets/{example}.yaml");
        let text = fs::read_to_string(repository().join(&file)).unwrap();
        if !text.contains("\nswitching:") {
            continue;
        }
        for (format, ext) in [("table", "txt"), ("json", "json"), ("csv", "csv")] {
            let args = [
                "residue",
                file.as_str(),
                "--samples",
                "64",
                "--format",
                format,
            ];
            let path = repository()
                .join("tests/golden")
                .join(&example)
                .join(format!("residue.{ext}"));
            failures.extend(pin(&path, &rendered(&args)));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn golden_improve() {
    pin_command("improve", &["improve"]);
}

#[test]
fn golden_trim() {
    pin_command("trim-null", &["trim", "--resolution", "10 ppm"]);
    pin_command(
        "trim-ratio",
        &["trim", "--resolution", "10 ppm", "--method", "ratio"],
    );
}

#[test]
fn golden_size() {
    for knob in [
        "resistors",
        "network-ratio",
        "filter-capacitors",
        "source-imbalance",
        "tracking",
        "first-stage-gain",
        "tail",
    ] {
        pin_command(&format!("size-{knob}"), &["size", "--vary", knob]);
    }
}

#[test]
fn golden_compare() {
    let mut failures = Vec::new();
    for (name, a, b) in [
        ("bridges", "bridge-integrated-inamp", "bridge-three-opamp"),
        (
            "pairs",
            "bjt-pair-resistor-tail",
            "bjt-pair-current-source-tail",
        ),
    ] {
        for (format, ext) in [("table", "txt"), ("json", "json"), ("csv", "csv")] {
            let (a, b) = (format!("budgets/{a}.yaml"), format!("budgets/{b}.yaml"));
            let path = repository()
                .join("tests/golden/compare")
                .join(format!("{name}.{ext}"));
            failures.extend(pin(
                &path,
                &rendered(&["compare", &a, &b, "--format", format]),
            ));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// Every invalid example, in a folder named by the kind of failure, gives
/// its whole message (`<name>.expected`) and exit status 2, from `budget`
/// and from `check` alike.
#[test]
fn golden_invalid_budgets() {
    let root = repository().join("budgets/invalid");
    let mut failures = Vec::new();
    let mut count = 0;
    let mut kinds: Vec<PathBuf> = fs::read_dir(&root)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    kinds.sort();
    for kind in kinds {
        assert!(
            kind.is_dir(),
            "{}: invalid examples live in folders named by the kind of failure",
            kind.display()
        );
        let mut files: Vec<PathBuf> = fs::read_dir(&kind)
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
            .collect();
        files.sort();
        for file in files {
            count += 1;
            let relative = file.strip_prefix(repository()).unwrap();
            let relative = relative.to_str().unwrap();
            let budget = rendered(&["budget", relative]);
            assert!(budget.ends_with("--- exit status 2 ---\n"), "{budget}");
            assert!(!budget.contains("panicked"), "{budget}");
            assert_eq!(
                budget,
                rendered(&["check", relative]),
                "{relative}: check and budget must give the same message"
            );
            failures.extend(pin(&file.with_extension("expected"), &budget));
        }
    }
    assert!(count >= 30, "{count} invalid examples");
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
