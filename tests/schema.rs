//! The budget file's JSON Schema (`cmrr schema`, issue 17) describes what
//! the reader takes: every example in `budgets/` validates against it, and
//! a misspelt field or an unknown stage does not. The validator below
//! covers the parts of JSON Schema the generated schema uses (`$ref`,
//! `type`, `properties`, `required`, `additionalProperties`, `items`,
//! `oneOf`, `anyOf`, `enum`, `const`).

use serde_json::Value;
use std::path::PathBuf;

fn schema() -> Value {
    serde_json::from_str(&cmrr_budget::budget::budget_schema()).unwrap()
}

fn resolve<'a>(root: &'a Value, node: &'a Value) -> &'a Value {
    match node.get("$ref").and_then(Value::as_str) {
        Some(reference) => {
            let name = reference.trim_start_matches("#/$defs/");
            resolve(root, &root["$defs"][name])
        }
        None => node,
    }
}

fn type_matches(kind: &str, value: &Value) -> bool {
    match kind {
        "object" => value.is_object(),
        "array" => value.is_array(),
        "string" => value.is_string(),
        "number" => value.is_number(),
        "integer" => value.is_i64() || value.is_u64(),
        "boolean" => value.is_boolean(),
        "null" => value.is_null(),
        _ => false,
    }
}

fn valid(root: &Value, node: &Value, value: &Value) -> bool {
    let node = resolve(root, node);
    if let Some(kinds) = node.get("type") {
        let ok = match kinds {
            Value::String(k) => type_matches(k, value),
            Value::Array(ks) => ks
                .iter()
                .filter_map(Value::as_str)
                .any(|k| type_matches(k, value)),
            _ => true,
        };
        if !ok {
            return false;
        }
    }
    if let Some(options) = node.get("enum").and_then(Value::as_array) {
        if !options.contains(value) {
            return false;
        }
    }
    if let Some(constant) = node.get("const") {
        if constant != value {
            return false;
        }
    }
    for key in ["oneOf", "anyOf"] {
        if let Some(options) = node.get(key).and_then(Value::as_array) {
            let matching = options.iter().filter(|o| valid(root, o, value)).count();
            if matching == 0 || (key == "oneOf" && matching > 1) {
                return false;
            }
        }
    }
    if let (Some(object), true) = (
        value.as_object(),
        node.get("properties").is_some() || node.get("required").is_some(),
    ) {
        let properties = node.get("properties").and_then(Value::as_object);
        for required in node
            .get("required")
            .and_then(Value::as_array)
            .into_iter()
            .flatten()
        {
            if !object.contains_key(required.as_str().unwrap_or("")) {
                return false;
            }
        }
        for (key, item) in object {
            let allowed = match properties.and_then(|p| p.get(key)) {
                Some(sub) => valid(root, sub, item),
                None => node.get("additionalProperties") != Some(&Value::Bool(false)),
            };
            if !allowed {
                return false;
            }
        }
    }
    if let (Some(items), Some(array)) = (node.get("items"), value.as_array()) {
        if !array.iter().all(|item| valid(root, items, item)) {
            return false;
        }
    }
    true
}

fn example(name: &str) -> Value {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("budgets")
        .join(name);
    let yaml: serde_yaml::Value =
        serde_yaml::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    serde_json::to_value(yaml).unwrap()
}

#[test]
fn issue_17_every_example_validates_against_the_schema() {
    let root = schema();
    assert_eq!(root["title"], "BudgetFile");
    let folder = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("budgets");
    let mut count = 0;
    for entry in std::fs::read_dir(folder).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "yaml") {
            let name = path.file_name().unwrap().to_string_lossy().into_owned();
            assert!(
                valid(&root, &root, &example(&name)),
                "{name} does not validate"
            );
            count += 1;
        }
    }
    assert!(count >= 7);
}

#[test]
fn issue_17_the_schema_refuses_what_the_reader_refuses() {
    let root = schema();
    let mut misspelt = example("load-cell-scale.yaml");
    misspelt["chain"][1]["difference_amp"]["r5"] = Value::String("10k".into());
    assert!(!valid(&root, &root, &misspelt));
    let mut unknown = example("load-cell-scale.yaml");
    unknown["chain"][1] = serde_json::json!({"tripple_amp": {"r1": "10k"}});
    assert!(!valid(&root, &root, &unknown));
    let mut missing = example("load-cell-scale.yaml");
    missing.as_object_mut().unwrap().remove("name");
    assert!(!valid(&root, &root, &missing));
}
