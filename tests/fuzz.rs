//! A mutation fuzzer over the read–validate–judge path, seeded from every
//! example and invalid budget: each case is a seed file with a few
//! mutations (numbers swapped for extremes, lines deleted, duplicated or
//! swapped, characters inserted, units changed, the file cut short). Every
//! case must either be refused with a located message or judged with
//! finite figures: no panic, no NaN.
//!
//! CI runs a bounded number of cases; run more with
//!
//! ```sh
//! CMRR_FUZZ_CASES=1000000 cargo test --release --test fuzz -- --nocapture
//! ```

use cmrr_budget::budget::parse_budget;
use cmrr_budget::verdict::{judge, Report, Totals};
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use std::path::{Path, PathBuf};

/// Cases per CI run.
const CI_CASES: usize = 3000;

/// The seed corpus: the examples (valid) and the invalid budgets.
fn seeds() -> (Vec<String>, Vec<String>) {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("budgets");
    let mut files = Vec::new();
    collect(&root, &mut files);
    files.sort();
    let (invalid, valid): (Vec<PathBuf>, Vec<PathBuf>) = files
        .into_iter()
        .partition(|f| f.components().any(|c| c.as_os_str() == "invalid"));
    let read = |list: Vec<PathBuf>| -> Vec<String> {
        list.iter()
            .filter_map(|f| std::fs::read_to_string(f).ok())
            .collect()
    };
    (read(valid), read(invalid))
}

fn collect(folder: &Path, files: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(folder).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            collect(&path, files);
        } else if path.extension().is_some_and(|e| e == "yaml") {
            files.push(path);
        }
    }
}

const EXTREMES: [&str; 14] = [
    "0",
    "-1",
    "1e308",
    "1e-320",
    "1e-12",
    "1e12",
    "NaN",
    "inf",
    "9999999",
    "0.0000001",
    "1e6",
    "1e-6",
    "-0",
    "1e15",
];

const UNITS: [(&str, &str); 8] = [
    ("k", "M"),
    ("nF", "uF"),
    (" %", " ppm"),
    ("Hz", "MHz"),
    (" rms", " pp"),
    ("dB", ""),
    ("pF", "F"),
    ("mV", "kV"),
];

/// One mutation of `text`.
fn mutate(text: &str, rng: &mut StdRng) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    if lines.is_empty() {
        return text.to_string();
    }
    let at = rng.random_range(0..lines.len());
    match rng.random_range(0..7) {
        0 => {
            // A number swapped for an extreme.
            let line = &lines[at];
            let starts: Vec<usize> = line
                .char_indices()
                .filter(|(i, c)| {
                    c.is_ascii_digit()
                        && (*i == 0 || !line.as_bytes()[i - 1].is_ascii_alphanumeric())
                })
                .map(|(i, _)| i)
                .collect();
            if let Some(&start) = starts.get(rng.random_range(0..starts.len().max(1))) {
                let end = line[start..]
                    .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == 'e' || c == '-'))
                    .map_or(line.len(), |n| start + n);
                let extreme = EXTREMES[rng.random_range(0..EXTREMES.len())];
                lines[at] = format!("{}{extreme}{}", &line[..start], &line[end..]);
            }
        }
        1 => {
            lines.remove(at);
        }
        2 => {
            let copy = lines[at].clone();
            lines.insert(at, copy);
        }
        3 => {
            let other = rng.random_range(0..lines.len());
            lines.swap(at, other);
        }
        4 => {
            let line = &mut lines[at];
            let chars: Vec<char> = line.chars().collect();
            let position = rng.random_range(0..=chars.len());
            let inserted = [' ', ':', '-', '{', '}', '[', ']', '#', '"', '\t', 'x', '0']
                [rng.random_range(0..12)];
            let mut new: String = chars[..position].iter().collect();
            new.push(inserted);
            new.extend(&chars[position..]);
            *line = new;
        }
        5 => {
            let (from, to) = UNITS[rng.random_range(0..UNITS.len())];
            lines[at] = lines[at].replacen(from, to, 1);
        }
        _ => {
            lines.truncate(at);
        }
    }
    let mut out = lines.join("\n");
    out.push('\n');
    out
}

fn no_nan<T: Copy>(totals: &Totals<T>, value: impl Fn(T) -> f64) -> bool {
    [
        totals.worst_case,
        totals.worst_corner,
        totals.rss,
        totals.nominal,
    ]
    .iter()
    .all(|t| !value(*t).is_nan())
}

/// Whether every figure of the report is a number (an infinite CMRR is a
/// documented figure; NaN never is).
fn figures_are_numbers(report: &Report) -> bool {
    let sources = report.results.iter().all(|r| {
        no_nan(&r.cmrr_db, |d| d.0)
            && no_nan(&r.error_rti_v, |v| v)
            && no_nan(&r.error_rto_v, |v| v)
            && !r.corner.cmrr_db.0.is_nan()
            && !r.judged.cmrr_db.0.is_nan()
            && r.differential_gain.is_finite()
            && r.contributions.iter().all(|c| !c.cmrr_db.0.is_nan())
    });
    let points = report.frequencies.iter().all(|f| {
        no_nan(&f.cmrr_db, |d| d.0)
            && !f.corner.cmrr_db.0.is_nan()
            && f.differential_gain.is_finite()
    });
    let margin = report.verdict.margin_db.is_none_or(|m| !m.0.is_nan());
    let headroom = report
        .headroom
        .iter()
        .all(|h| h.low_v.is_finite() && h.high_v.is_finite());
    sources && points && margin && headroom
}

/// What one case did.
#[derive(Default, Debug)]
struct Tally {
    refused: usize,
    judged: usize,
    failed_in_solve: usize,
}

fn run_case(text: &str, tally: &mut Tally) {
    match parse_budget(text, "fuzz.yaml") {
        Err(error) => {
            let message = error.to_string();
            assert!(
                message.starts_with("fuzz.yaml"),
                "an unlocated refusal: {message}\n--- input ---\n{text}"
            );
            tally.refused += 1;
        }
        Ok(budget) => match judge(&budget) {
            Ok(report) => {
                assert!(
                    figures_are_numbers(&report),
                    "NaN in a report\n--- input ---\n{text}"
                );
                tally.judged += 1;
            }
            Err(_) => tally.failed_in_solve += 1,
        },
    }
}

#[test]
fn mutated_budgets_are_refused_or_judged_without_nan() {
    let cases = std::env::var("CMRR_FUZZ_CASES")
        .ok()
        .and_then(|n| n.parse().ok())
        .unwrap_or(CI_CASES);
    let (valid, invalid) = seeds();
    assert!(valid.len() >= 7 && invalid.len() >= 30);
    let mut rng = StdRng::seed_from_u64(17);
    let mut tally = Tally::default();
    for case in 0..cases {
        // Mostly the examples, so that most cases reach the solve.
        let seed = if rng.random_range(0..5) == 0 {
            &invalid[rng.random_range(0..invalid.len())]
        } else {
            &valid[rng.random_range(0..valid.len())]
        };
        let mut text = seed.clone();
        for _ in 0..rng.random_range(1..=2) {
            text = mutate(&text, &mut rng);
        }
        let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            let mut local = Tally::default();
            run_case(&text, &mut local);
            local
        }));
        match outcome {
            Ok(local) => {
                tally.refused += local.refused;
                tally.judged += local.judged;
                tally.failed_in_solve += local.failed_in_solve;
            }
            Err(_) => panic!("case {case} panicked\n--- input ---\n{text}"),
        }
    }
    eprintln!("{cases} mutated budgets: {tally:?}");
}
