//! The README's budget-file examples stay valid: every YAML block in it is
//! read by the budget reader (the stage listings inside a minimal budget).

use cmrr_budget::budget::parse_budget;

fn yaml_blocks() -> Vec<String> {
    let text = include_str!("../README.md");
    text.split("```yaml\n")
        .skip(1)
        .map(|rest| rest.split("```").next().unwrap_or("").to_string())
        .collect()
}

#[test]
fn readme_budget_examples_parse() {
    let blocks = yaml_blocks();
    assert!(blocks.len() >= 3, "the README should show the budget file");
    let hum = "interference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}\n";
    for (index, block) in blocks.iter().enumerate() {
        let text = if block.contains("name:") && block.contains("chain:") {
            block.clone()
        } else if block.trim_start().starts_with("- ") || block.trim_start().starts_with("  - ") {
            // A listing of stage kinds: wrap it into a chain, without the
            // pair's own temperature so a range may sit beside it.
            let stages: String = block
                .lines()
                .filter(|l| !l.trim_start().starts_with("temperature:"))
                .map(|l| format!("{l}\n"))
                .collect();
            format!("name: readme stages\ntemperature: {{reference: 25 degC, range: [0 degC, 70 degC]}}\nchain:\n{stages}{hum}")
        } else {
            // Top-level sections: add a minimal chain (and a temperature
            // range for its resistors' coefficient, unless the block has
            // one).
            let range = if block.contains("temperature:") {
                ""
            } else {
                "temperature: {reference: 25 degC, range: [0 degC, 70 degC]}\n"
            };
            let sources = if block.contains("interference:") {
                ""
            } else {
                hum
            };
            format!("{block}{range}name: readme sections\nchain:\n  - difference_amp: {{r1: 10k, r2: 10k, r3: 10k, r4: 10k, tcr: 25 ppm/K}}\n{sources}")
        };
        if let Err(error) = parse_budget(&text, "README.md") {
            panic!("README yaml block {index} does not parse:\n{error}\n---\n{text}");
        }
    }
}

/// One fenced block of the README: its language tag and its lines.
struct Block {
    language: String,
    lines: Vec<String>,
}

fn blocks() -> Vec<Block> {
    let mut blocks = Vec::new();
    let mut current: Option<Block> = None;
    for line in include_str!("../README.md").lines() {
        match (&mut current, line.strip_prefix("```")) {
            (None, Some(language)) => {
                current = Some(Block {
                    language: language.trim().to_string(),
                    lines: Vec::new(),
                })
            }
            (Some(_), Some(_)) => blocks.push(current.take().expect("inside a block")),
            (Some(block), None) => block.lines.push(line.to_string()),
            (None, None) => {}
        }
    }
    blocks
}

/// A README command as a shell would split it: words, with double quotes
/// holding spaces; the comment after `#` is returned apart.
fn split_command(line: &str) -> (Vec<String>, String) {
    let mut words = Vec::new();
    let mut word = String::new();
    let mut quoted = false;
    let mut comment = String::new();
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '"' => quoted = !quoted,
            '#' if !quoted && word.is_empty() => {
                comment = chars.collect();
                break;
            }
            ' ' if !quoted => {
                if !word.is_empty() {
                    words.push(std::mem::take(&mut word));
                }
            }
            other => word.push(other),
        }
    }
    if !word.is_empty() {
        words.push(word);
    }
    (words, comment)
}

/// The arguments of a README command line for `cmrr`, if it is one.
fn cmrr_arguments(line: &str) -> Option<(Vec<String>, String)> {
    let line = line.trim();
    let rest = line
        .strip_prefix("cmrr ")
        .or_else(|| line.strip_prefix("cargo run --release -- "))?;
    Some(split_command(rest))
}

/// The exit status a README command promises: `exits N` in its comment,
/// else 0.
fn promised_status(comment: &str) -> i32 {
    comment
        .split("exits ")
        .nth(1)
        .and_then(|rest| rest.chars().next())
        .and_then(|c| c.to_digit(10))
        .map_or(0, |d| d as i32)
}

/// A scratch folder holding a copy of the examples, so that commands
/// writing files (`-o shunt.csv`, `--plot sweep.svg`) write there.
fn scratch() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let examples = dir.path().join("budgets");
    std::fs::create_dir(&examples).unwrap();
    let source = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("budgets");
    for entry in std::fs::read_dir(source).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "yaml") {
            std::fs::copy(&path, examples.join(path.file_name().unwrap())).unwrap();
        }
    }
    dir
}

/// Every `cmrr …` command in the README's shell blocks runs as written
/// with the exit status it promises (`# exits 1: …`; 0 otherwise), and an
/// output block right after a one-command shell block shows lines the
/// command really prints (a `...` line stands for lines left out). Every
/// inline `cmrr …` command that names an example runs without a usage or
/// input error.
#[test]
fn readme_commands_run_as_written() {
    let all = blocks();
    let mut ran = 0;
    for (index, block) in all.iter().enumerate() {
        if block.language != "sh" {
            continue;
        }
        let commands: Vec<(Vec<String>, String)> = block
            .lines
            .iter()
            .filter_map(|l| cmrr_arguments(l))
            .collect();
        let excerpt = all
            .get(index + 1)
            .filter(|next| next.language.is_empty() && commands.len() == 1);
        for (arguments, comment) in &commands {
            let dir = scratch();
            let output = assert_cmd::Command::cargo_bin("cmrr")
                .unwrap()
                .current_dir(dir.path())
                .args(arguments)
                .output()
                .unwrap();
            let stdout = String::from_utf8(output.stdout).unwrap();
            let stderr = String::from_utf8(output.stderr).unwrap();
            assert_eq!(
                output.status.code(),
                Some(promised_status(comment)),
                "README: `cmrr {}` (#{comment}):\n{stderr}",
                arguments.join(" ")
            );
            ran += 1;
            if let Some(excerpt) = excerpt {
                let printed: Vec<&str> = stdout.lines().map(str::trim_end).collect();
                for line in excerpt.lines.iter().map(|l| l.trim_end()) {
                    if line.trim() == "..." || line.trim_start().starts_with("│ ...") {
                        continue;
                    }
                    assert!(
                        printed.contains(&line),
                        "README shows `{line}` for `cmrr {}`, which does not print it:\n{stdout}",
                        arguments.join(" ")
                    );
                }
            }
        }
    }
    assert!(ran >= 8, "{ran} README commands");
    // Inline commands in the prose.
    let text = include_str!("../README.md");
    for span in text.split('`').skip(1).step_by(2) {
        let Some((arguments, _)) = cmrr_arguments(span) else {
            continue;
        };
        if !arguments.iter().any(|a| a.starts_with("budgets/")) {
            continue;
        }
        let dir = scratch();
        let output = assert_cmd::Command::cargo_bin("cmrr")
            .unwrap()
            .current_dir(dir.path())
            .args(&arguments)
            .output()
            .unwrap();
        assert_ne!(
            output.status.code(),
            Some(2),
            "README: `{span}`: {}",
            String::from_utf8_lossy(&output.stderr)
        );
    }
}
