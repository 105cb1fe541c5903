//! A ripple on a bridge's excitation, a converter reference taken from the
//! excitation, and the excitation leads.

use cmrr_budget::budget::parse_budget;
use cmrr_budget::model::Budget;
use cmrr_budget::verdict::judge;

fn parse(text: &str) -> Budget {
    parse_budget(text, "inline.yaml").unwrap_or_else(|e| panic!("{e}"))
}

/// A 2 mV/V bridge at 5 V read by a difference stage with an ideal op-amp
/// and no capacitance, so the signal path's gain is flat: `A_d(f) = A_d(0)`.
fn flat_chain(bridge_extra: &str, reference: &str, source: &str) -> Budget {
    parse(&format!(
        "name: r\nmeasurand: {{unit: kg, bridge: {{sensitivity: 2 mV/V, excitation: 5 V, capacity: 100{bridge_extra}}}}}\nchain:\n  - difference_amp: {{r1: 10k ±0.01 %, r2: 100k ±0.01 %, r3: 10k ±0.01 %, r4: 100k ±0.01 %}}\n  - adc: {{span: 5 V, bits: 24{reference}}}\ninterference:\n  - {source}\n"
    ))
}

const RIPPLE: &str = "{name: ripple, excitation_ripple: 10 mV rms, frequency: 100 Hz}";

/// Hand derivation (common practice, no source): the reading of a
/// ratiometric converter is `A_d·S·x·(V + δ)/(k (V + H_ref δ))`; to first
/// order in δ it moves by `(δ/V)(A_d(f)/A_d(0) − H_ref(f))` of itself, so
/// referred to the input at capacity `S·δ·|1 − H_ref·A_d(0)/A_d(f)|` is
/// left. With a flat signal path and a reference taken straight, nothing;
/// through a single pole at f_c, `S·δ·(f/f_c)/√(1 + (f/f_c)²)`; with a
/// reference of the converter's own, all of `S·δ`.
#[test]
fn issue_12_ratiometric_reference_cancels_what_the_paths_share() {
    let s_delta = 2e-3 * 10e-3;
    let own = judge(&flat_chain("", "", RIPPLE)).unwrap();
    let own = own.results[0].through_bridge.clone().unwrap();
    assert!((own.differential_v / s_delta - 1.0).abs() < 1e-12);
    assert!((own.left_rti_v / s_delta - 1.0).abs() < 1e-12);
    assert!(own.cancellation_db.is_none());

    let straight = judge(&flat_chain("", ", reference: {from: excitation}", RIPPLE)).unwrap();
    let straight = straight.results[0].through_bridge.clone().unwrap();
    assert!(
        straight.left_rti_v < 1e-9 * s_delta,
        "{}",
        straight.left_rti_v
    );

    let filtered = judge(&flat_chain(
        "",
        ", reference: {from: excitation, corner: 1 kHz}",
        RIPPLE,
    ))
    .unwrap();
    let filtered = filtered.results[0].through_bridge.clone().unwrap();
    let x: f64 = 100.0 / 1000.0;
    let expected = s_delta * x / (1.0 + x * x).sqrt();
    assert!(
        (filtered.left_rti_v / expected - 1.0).abs() < 1e-9,
        "{} against {expected}",
        filtered.left_rti_v
    );
    let db = filtered.cancellation_db.unwrap().0;
    assert!((db - 20.0 * (s_delta / expected).log10()).abs() < 1e-9);
}

/// The ripple's common mode is half of it, the bridge sitting between the
/// excitation and ground; the error in the reading adds the common mode's
/// error to what the bridge's part leaves, and the limit is judged on it.
#[test]
fn issue_12_ripple_common_mode_and_the_reading_error() {
    let source =
        "{name: ripple, excitation_ripple: 10 mV rms, frequency: 100 Hz, max_error: 100 nV rms}";
    let report = judge(&flat_chain("", "", source)).unwrap();
    let result = &report.results[0];
    assert!((result.amplitude_v - 5e-3).abs() < 1e-15);
    let ripple = result.through_bridge.as_ref().unwrap();
    let sum = result.error_rti_v.worst_case + ripple.left_rti_v;
    assert!((ripple.error_rti_v.worst_case / sum - 1.0).abs() < 1e-12);
    assert_eq!(result.judged.error_rti_v, Some(sum));
    let check = &result.requirement.as_ref().unwrap().checks[0];
    assert!((check.margin_db.0 - 20.0 * (100e-9 / sum).log10()).abs() < 1e-9);
}

/// Excitation leads of R_l each with local sense leave the bridge
/// `V R_b/(R_b + 2R_l)`, so the full scale falls by that ratio and the
/// outputs' common mode stays at V/2; with remote sense the bridge sees V
/// and its low end sits at `V R_l/R_b`, the return lead's drop (Ohm's law,
/// common practice, no source).
#[test]
fn issue_12_excitation_leads_with_local_and_remote_sense() {
    let dc = "{name: cm, amplitude: excitation/2, frequency: DC}";
    let local = flat_chain(", resistance: 350 Ω, lead_resistance: 5 Ω", "", dc);
    let alpha = 350.0 / 360.0;
    let fs = local.full_scale_volts().unwrap();
    assert!((fs / (10e-3 * alpha) - 1.0).abs() < 1e-12, "{fs}");
    assert!((local.interference[0].amplitude.volts - 2.5).abs() < 1e-12);
    let remote = flat_chain(
        ", resistance: 350 Ω, lead_resistance: 5 Ω, sense: remote",
        "",
        dc,
    );
    assert!((remote.full_scale_volts().unwrap() - 10e-3).abs() < 1e-15);
    let expected = 2.5 + 5.0 * 5.0 / 350.0;
    assert!((remote.interference[0].amplitude.volts - expected).abs() < 1e-12);
}

/// The refusals name their field.
#[test]
fn issue_12_ripple_and_reference_refusals() {
    let both = "{name: r, amplitude: 1 V rms, excitation_ripple: 10 mV rms, frequency: 100 Hz}";
    let text = format!("name: r\nmeasurand: {{unit: kg, bridge: {{sensitivity: 2 mV/V, excitation: 5 V, capacity: 100}}}}\nchain:\n  - difference_amp: {{r1: 10k, r2: 100k, r3: 10k, r4: 100k}}\ninterference:\n  - {both}\n");
    let error = parse_budget(&text, "r.yaml").unwrap_err().to_string();
    assert!(
        error.contains("interference[0].excitation_ripple"),
        "{error}"
    );
    let text = "name: r\nchain:\n  - difference_amp: {r1: 10k, r2: 100k, r3: 10k, r4: 100k}\n  - adc: {span: 5 V, bits: 24, reference: {from: excitation}}\ninterference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}\n";
    let error = parse_budget(text, "r.yaml").unwrap_err().to_string();
    assert!(error.contains("chain[1].adc.reference.from"), "{error}");
    let text = text.replace("from: excitation", "from: bandgap");
    let error = parse_budget(&text, "r.yaml").unwrap_err().to_string();
    assert!(error.contains("not a reference"), "{error}");
    let text = "name: r\nmeasurand: {unit: kg, bridge: {sensitivity: 2 mV/V, excitation: 5 V, capacity: 100, lead_resistance: 2}}\nchain:\n  - difference_amp: {r1: 10k, r2: 100k, r3: 10k, r4: 100k}\ninterference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}\n";
    let error = parse_budget(text, "r.yaml").unwrap_err().to_string();
    assert!(
        error.contains("measurand.bridge.lead_resistance"),
        "{error}"
    );
}

/// `cmrr yield` shows the error as read beside the analog error: the
/// bridge's part added and the digital filter's worst gain applied, as its
/// per-unit checks judge it (the same rule as the verdict's, restated).
#[test]
fn issue_12_yield_shows_the_error_as_read() {
    use cmrr_budget::montecarlo::production::production_yield;
    use cmrr_budget::montecarlo::{TemperatureMode, YieldOptions};
    let root = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let budget =
        cmrr_budget::budget::load_budget(&root.join("budgets/weighing-sinc-filter.yaml")).unwrap();
    let options = YieldOptions {
        trials: 2000,
        seed: 5,
        temperature: TemperatureMode::Reference,
    };
    let stop = std::sync::atomic::AtomicBool::new(false);
    let (production, _) = production_yield(&budget, options, &|_| {}, &stop).unwrap();
    let verdict = judge(&budget).unwrap();
    for (source, result) in production.sources.iter().zip(&verdict.results) {
        let Some(read) = &source.error_as_read_v else {
            assert!(result.after_filter.is_none() && result.through_bridge.is_none());
            continue;
        };
        let gain = result
            .after_filter
            .as_ref()
            .unwrap()
            .rejection_db
            .conversion();
        let beside = result.through_bridge.as_ref().map_or(0.0, |r| r.left_rti_v);
        let expected = (source.error_rti_v.p99 + beside) * gain;
        assert!(
            (read.p99 / expected - 1.0).abs() < 1e-12,
            "{}",
            source.source
        );
    }
}

/// A refused measurand is reported once: what depends on it (a ripple
/// source, a reference from the excitation) is not refused a second time.
#[test]
fn issue_12_a_refused_measurand_is_reported_once() {
    let text = "name: r\nmeasurand: {unit: kg, bridge: {sensitivity: 2 mV/V, excitation: 5 V, capacity: 100, resistance: 350, lead_resistance: 1e300}}\nchain:\n  - difference_amp: {r1: 10k, r2: 100k, r3: 10k, r4: 100k}\n  - adc: {span: 5 V, bits: 24, reference: {from: excitation}}\ninterference:\n  - {name: r, excitation_ripple: 10 mV rms, frequency: 100 Hz}\n";
    let error = parse_budget(text, "r.yaml").unwrap_err().to_string();
    assert!(
        error.contains("measurand.bridge.lead_resistance"),
        "{error}"
    );
    assert!(!error.contains("names no"), "{error}");
}
