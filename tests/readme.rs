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
            // Top-level sections: add a minimal chain.
            format!("{block}name: readme sections\nchain:\n  - difference_amp: {{r1: 10k, r2: 10k, r3: 10k, r4: 10k, tcr: 25 ppm/K}}\n{hum}")
        };
        if let Err(error) = parse_budget(&text, "README.md") {
            panic!("README yaml block {index} does not parse:\n{error}\n---\n{text}");
        }
    }
}
