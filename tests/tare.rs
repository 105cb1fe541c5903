//! What a tare (zero calibration) leaves of a DC common mode's offset.

use cmrr_budget::budget::parse_budget;
use cmrr_budget::model::Budget;
use cmrr_budget::verdict::{judge, TaredError};

fn parse(text: &str) -> Budget {
    parse_budget(text, "inline.yaml").unwrap_or_else(|e| panic!("{e}"))
}

/// A difference amplifier of gain `G = 10` from four 0.1 % resistors with
/// ±25 ppm/K each (when `top` states a temperature range), reading a 2.5 V
/// bridge common mode; `extra` is added to the source, `top` at the top of
/// the file.
fn difference_stage(top: &str, extra: &str) -> Budget {
    let tcr = if top.is_empty() {
        ""
    } else {
        ", tcr: 25 ppm/K"
    };
    parse(&format!(
        "name: tare\n{top}chain:\n  - difference_amp: {{r1: 10k ±0.1 %, r2: 100k ±0.1 %, r3: 10k ±0.1 %, r4: 100k ±0.1 %{tcr}}}\ninterference:\n  - {{name: bridge common mode, amplitude: 2.5 V, frequency: DC{extra}}}\n"
    ))
}

const RANGE: &str = "temperature: {reference: 25 degC, range: [-15 degC, 65 degC]}\n";

fn tared(budget: &Budget) -> TaredError {
    judge(budget).unwrap().results[0]
        .after_tare
        .clone()
        .expect("the source is tared")
}

/// The worst-case conversion of a difference amplifier of gain G whose four
/// resistors each lie within ±t is `4t/(1 + G)` to first order: Pallas-Areny
/// and Webster, "Common mode rejection ratio in differential amplifiers",
/// IEEE Trans. Instrum. Meas. 40(4), 1991, the worst-case CMRR
/// `(1 + G)/(4t)` (from memory). A tare cancels each unit's tolerances; what
/// is left at an excursion ΔT is the drift, each resistor within ±αΔT, so
/// `V · 4αΔT/(1 + G)`, plus the conversion of the common mode's own
/// movement ΔV at that temperature, `ΔV · 4(t + αΔT)/(1 + G)` (the same
/// formula, the drift adding to the tolerance).
#[test]
fn issue_12_tare_leaves_the_drift_and_the_common_mode_movement() {
    let budget = difference_stage(RANGE, ", tare: {varies_by: 1 %}");
    let residual = tared(&budget);
    let (v, dv, g, t, drift) = (2.5, 0.025, 10.0, 1e-3, 25e-6 * 40.0);
    let expected = v * 4.0 * drift / (1.0 + g) + dv * 4.0 * (t + drift) / (1.0 + g);
    let got = residual.residual_rti_v.worst_case;
    assert!(
        (got / expected - 1.0).abs() < 0.01,
        "{got} against {expected}"
    );
    // Both ends are 40 K from the reference; the residual names one.
    assert!(residual.temperature_k.is_some());
    assert_eq!(residual.calibrated_at_k, Some(298.15));
    assert!((residual.varies_by_v - dv).abs() < 1e-15);
    // The exact corner sits at the linear bound here (the resistors' swings
    // are in phase at DC) to first order.
    let corner = residual.residual_rti_v.worst_corner;
    assert!((corner / got - 1.0).abs() < 0.01, "{corner} against {got}");
    // The drift rows dominate; each resistor's TC is a row of its own.
    let tc_rows = residual
        .contributions
        .iter()
        .filter(|r| r.name.ends_with(" TC"))
        .count();
    assert_eq!(tc_rows, 4);
}

/// At one temperature and with the common mode fixed, a tare cancels every
/// tolerance exactly (each unit subtracts its own offset): nothing is left,
/// whatever the parts' spread. Exact by construction (common practice, no
/// source).
#[test]
fn issue_12_tare_at_one_temperature_and_fixed_common_mode_leaves_nothing() {
    let budget = difference_stage("", ", tare: {varies_by: 0 V}, max_error: 1 nV");
    let report = judge(&budget).unwrap();
    let source = &report.results[0];
    let residual = source.after_tare.as_ref().unwrap();
    assert_eq!(residual.residual_rti_v.worst_case, 0.0);
    assert_eq!(residual.residual_rti_v.worst_corner, 0.0);
    assert!(residual.contributions.is_empty());
    let outcome = source.requirement.as_ref().unwrap();
    assert!(outcome.met);
    assert!(outcome.checks[0].limit.contains("after tare"));
    // Untared, the same limit is missed by far.
    let untared = judge(&difference_stage("", ", max_error: 1 nV")).unwrap();
    assert!(!untared.results[0].requirement.as_ref().unwrap().met);
}

/// Without a temperature range only the common mode's movement converts:
/// the residual is the untared error scaled by ΔV/V, total by total, the
/// linear bound exactly (the same swings, the same magnitudes).
#[test]
fn issue_12_tare_without_temperatures_scales_the_offset_by_the_movement() {
    let budget = difference_stage("", ", tare: {varies_by: 50 mV}");
    let report = judge(&budget).unwrap();
    let source = &report.results[0];
    let residual = source.after_tare.as_ref().unwrap();
    let scale = 0.05 / 2.5;
    let untared = source.error_rti_v;
    let close = |a: f64, b: f64| (a / b - 1.0).abs() < 1e-12;
    assert!(close(
        residual.residual_rti_v.worst_case,
        untared.worst_case * scale
    ));
    assert!(close(residual.residual_rti_v.rss, untared.rss * scale));
    assert!(residual.temperature_k.is_none());
    // The corner search finds the untared offset's worst corner too.
    let corner = residual.residual_rti_v.worst_corner;
    assert!(
        (corner / (untared.worst_corner * scale) - 1.0).abs() < 1e-9,
        "{corner}"
    );
}

/// A limit judged on the residual: its margin is the limit over the judged
/// residual, in dB, and the judged figure carries the residual.
#[test]
fn issue_12_tared_limit_is_judged_on_the_residual() {
    let budget = difference_stage(RANGE, ", tare: {varies_by: 1 %}, max_error: 1 mV");
    let report = judge(&budget).unwrap();
    let source = &report.results[0];
    let residual = source
        .after_tare
        .as_ref()
        .unwrap()
        .residual_rti_v
        .worst_case;
    assert_eq!(source.judged.error_rti_v, Some(residual));
    let check = &source.requirement.as_ref().unwrap().checks[0];
    assert!((check.margin_db.0 - 20.0 * (1e-3 / residual).log10()).abs() < 1e-9);
    assert!(check.met);
}

/// A tare removes a constant offset only: refused on an alternating
/// source, with the field named.
#[test]
fn issue_12_tare_on_an_alternating_source_is_refused() {
    let text = "name: t\nchain:\n  - difference_amp: {r1: 10k ±0.1 %, r2: 100k ±0.1 %, r3: 10k ±0.1 %, r4: 100k ±0.1 %}\ninterference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz, tare: {varies_by: 1 %}}\n";
    let error = parse_budget(text, "t.yaml").unwrap_err().to_string();
    assert!(error.contains("interference[0].tare"), "{error}");
    assert!(error.contains("DC source"), "{error}");
    let text = text
        .replace("1 V rms, frequency: 50 Hz", "2.5 V, frequency: DC")
        .replace("1 %", "1 Hz");
    let error = parse_budget(&text, "t.yaml").unwrap_err().to_string();
    assert!(error.contains("interference[0].tare.varies_by"), "{error}");
}

/// A source's limit in % of full scale takes the full scale from the
/// measurand's rating (sensitivity × excitation) when the budget has no
/// requirement section: 2 mV/V × 5 V = 10 mV.
#[test]
fn issue_12_source_limit_of_full_scale_from_the_rating_without_a_requirement() {
    let budget = parse("name: t\nmeasurand: {unit: kg, bridge: {sensitivity: 2 mV/V, excitation: 5 V, capacity: 100}}\nchain:\n  - difference_amp: {r1: 10k ±0.1 %, r2: 100k ±0.1 %, r3: 10k ±0.1 %, r4: 100k ±0.1 %}\ninterference:\n  - {name: cm, amplitude: excitation/2, frequency: DC, tare: {varies_by: 1 %}, max_error: 0.02 %}\n");
    assert_eq!(budget.full_scale_volts(), Some(0.01));
    let report = judge(&budget).unwrap();
    let check = &report.results[0].requirement.as_ref().unwrap().checks[0];
    assert!(
        check.limit.contains("of 10.0 mV full scale"),
        "{}",
        check.limit
    );
    assert!(report.results[0]
        .after_tare
        .as_ref()
        .unwrap()
        .residual_fs_ppm
        .is_some());
}
