//! A converter's digital filter and limits stated in codes and in the
//! measured quantity's units (issue 12): the error in the reading against
//! the closed-form sinc response, the conversions to codes and units
//! derived by hand, and the refusals.

use cmrr_budget::budget::parse_budget;
use cmrr_budget::model::Budget;
use cmrr_budget::verdict::{judge, SourceResult};
use std::f64::consts::PI;

fn parse(text: &str) -> Budget {
    parse_budget(text, "inline.yaml").unwrap_or_else(|e| panic!("{e}"))
}

fn refused(text: &str) -> String {
    match parse_budget(text, "inline.yaml") {
        Ok(_) => panic!("accepted:\n{text}"),
        Err(e) => e.to_string(),
    }
}

/// A difference amplifier of gain 10 with a 0.1 % R4 into a 16-bit
/// converter of 5 V span, with `filter` and the sources and requirement
/// given.
fn chain(filter: &str, rest: &str) -> String {
    format!(
        "name: filter check
measurand:
  unit: kg
  bridge: {{sensitivity: 2 mV/V, excitation: 5 V, capacity: 100}}
chain:
  - difference_amp:
      r1: 1k
      r2: 10k
      r3: 1k
      r4: 10k ±0.1 %
      opamp: {{open_loop_gain: 1e9, gain_bandwidth: 1 GHz}}
  - adc:
      span: 5 V
      bits: 16
      {filter}
{rest}"
    )
}

fn source<'a>(budget: &'a cmrr_budget::verdict::Report, name: &str) -> &'a SourceResult {
    budget
        .results
        .iter()
        .find(|r| r.source == name)
        .unwrap_or_else(|| panic!("no source {name}"))
}

#[test]
fn error_after_a_sinc_filter_is_the_input_error_times_its_closed_form() {
    // |H(f)| = |sin(π f/f_o)/(π f/f_o)|^N in the continuous limit:
    // Schreier and Temes, Understanding Delta-Sigma Data Converters, 2005,
    // decimation-filter chapter, from memory. At f = f_o/2 it is (2/π)^N.
    let budget = parse(&chain(
        "filter: {sinc: 3, output_rate: 100 Hz}",
        "interference:
  - name: hum
    amplitude: 1 V rms
    frequency: 50 Hz
  - name: notched
    amplitude: 1 V rms
    frequency: 200 Hz
",
    ));
    let report = judge(&budget).unwrap();
    let hum = source(&report, "hum");
    let filtered = hum.after_filter.as_ref().expect("a filter acts at 50 Hz");
    let h = (2.0 / PI).powi(3);
    let before = hum.error_rti_v.worst_case;
    assert!((filtered.error_rti_v.worst_case / before - h).abs() < 1e-12 * h);
    assert!((filtered.rejection_db.0 + 20.0 * h.log10()).abs() < 1e-9);
    // Codes are the error at the converter's input over one LSB (5 V/2^16).
    let lsb = 5.0 / 65536.0;
    let codes = filtered.error_lsb.as_ref().unwrap().worst_case;
    let expected = before * h * hum.differential_gain / lsb;
    assert!((codes - expected).abs() < 1e-12 * expected);
    // The measurand: 2 mV/V × 5 V over 100 kg = 100 µV/kg at the input.
    let kg = filtered.error_measurand.as_ref().unwrap().worst_case;
    assert!((kg - before * h / 100e-6).abs() < 1e-12 * kg);
    // 200 Hz is the second notch: nothing passes.
    let notched = source(&report, "notched").after_filter.as_ref().unwrap();
    assert!(notched.error_rti_v.worst_case < 1e-12 * hum.error_rti_v.worst_case);
}

#[test]
fn a_drifting_mains_is_judged_at_the_worst_edge_of_its_band() {
    // 50 Hz ±1 % against a sinc4 with notches every 10 Hz: the worst is
    // at a band end, |sin(π 5.05)/(π 5.05)|^4 or |sin(π 4.95)/(π 4.95)|^4
    // (same source), the larger being 4.95.
    let budget = parse(&chain(
        "filter: {sinc: 4, output_rate: 10 Hz}",
        "interference:
  - name: hum
    amplitude: 1 V rms
    frequency: 50 Hz
    frequency_drift: 1 %
",
    ));
    let report = judge(&budget).unwrap();
    let filtered = source(&report, "hum").after_filter.clone().unwrap();
    let x = PI * 4.95;
    let h = (x.sin() / x).abs().powi(4);
    assert!((filtered.rejection_db.0 + 20.0 * h.log10()).abs() < 1e-9);
    assert!((filtered.worst_at_hz - 49.5).abs() < 1e-9);
    assert_eq!(filtered.band_hz, [49.5, 50.5]);
}

#[test]
fn a_limit_in_codes_is_judged_after_the_filter_through_the_chain_gain() {
    // An average over 20 ms (sinc1, notches every 50 Hz) read at 25 Hz,
    // where it passes 2/π; one code referred to the input is the LSB over
    // the chain's gain at 25 Hz.
    let budget = parse(&chain(
        "filter: {average_over: 20 ms}",
        "interference:
  - name: hum
    amplitude: 1 V rms
    frequency: 25 Hz
requirement:
  max_error: 1 LSB
",
    ));
    let report = judge(&budget).unwrap();
    let hum = source(&report, "hum");
    let outcome = hum.requirement.as_ref().unwrap();
    let check = &outcome.checks[0];
    let lsb_rti = 5.0 / 65536.0 / hum.differential_gain;
    let peak_after = hum.error_rti_v.worst_case * 2f64.sqrt() * 2.0 / PI;
    let margin = 20.0 * (lsb_rti / peak_after).log10();
    assert!((check.margin_db.0 - margin).abs() < 1e-9, "{check:?}");
    assert!(check.limit.contains("1.00 LSB"), "{}", check.limit);
    assert!(check.achieved.contains("after the digital filter"));
    // The CMRR the limit asks of the analog chain is eased by the filter.
    let allowed = lsb_rti / (2f64.sqrt() * 2.0 / PI);
    assert!((check.allowed_cmrr_db.0 + 20.0 * allowed.log10()).abs() < 1e-9);
}

#[test]
fn a_limit_in_the_measurands_unit_converts_through_its_sensitivity() {
    // 0.005 kg at 100 µV/kg is 500 nV peak at the input (the measurand's
    // rating, by hand). No filter: the error is the analog one.
    let budget = parse(&chain(
        "",
        "interference:
  - name: hum
    amplitude: 1 V rms
    frequency: 50 Hz
    max_error: 0.005 kg
",
    ));
    let report = judge(&budget).unwrap();
    let hum = source(&report, "hum");
    assert!(hum.after_filter.is_none());
    let check = &hum.requirement.as_ref().unwrap().checks[0];
    let peak = hum.error_rti_v.worst_case * 2f64.sqrt();
    assert!((check.margin_db.0 - 20.0 * (500e-9 / peak).log10()).abs() < 1e-9);
    assert!(check.limit.contains("0.00500 kg"), "{}", check.limit);
}

#[test]
fn the_bridge_rating_sets_the_full_scale_and_the_common_mode() {
    let budget = parse(&chain(
        "",
        "interference:
  - name: bridge common mode
    amplitude: excitation/2
    frequency: DC
requirement:
  max_error: 0.1 %
",
    ));
    assert_eq!(budget.interference[0].amplitude.volts, 2.5);
    assert_eq!(
        budget.requirement.as_ref().unwrap().full_scale_volts,
        Some(10e-3)
    );
}

#[test]
fn limits_that_do_not_fit_the_chain_are_refused_with_a_fix() {
    let no_converter = "name: x
chain:
  - integrated_inamp: {gain: 10}
interference:
  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz, max_error: 1 LSB}
";
    assert!(refused(no_converter).contains("does not end in a converter"));
    let wrong_unit = chain(
        "",
        "interference:
  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz, max_error: 5 N}
",
    );
    let message = refused(&wrong_unit);
    assert!(message.contains("`0.01 kg`"), "{message}");
    let dc_drift = chain(
        "",
        "interference:
  - {name: cm, amplitude: 2 V, frequency: DC, frequency_drift: 1 %}
",
    );
    assert!(refused(&dc_drift).contains("no frequency to drift"));
    let short_table = chain(
        "filter: {table: [[10 Hz, -20 dB], [40 Hz, -60 dB]]}",
        "interference:
  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}
",
    );
    assert!(refused(&short_table).contains("not extrapolated"));
    let disagreeing = chain(
        "",
        "interference:
  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}
requirement: {full_scale: 12 mV, max_error: 0.1 %}
",
    );
    assert!(refused(&disagreeing).contains("disagrees with the measurand"));
    let two_kinds = chain(
        "filter: {sinc: 3, average_over: 20 ms, output_rate: 10 Hz}",
        "interference:
  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}
",
    );
    assert!(refused(&two_kinds).contains("exactly one of"));
    let order = chain(
        "filter: {sinc: 7, output_rate: 10 Hz}",
        "interference:
  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}
",
    );
    assert!(refused(&order).contains("order 7"));
}

#[test]
fn a_table_response_interpolates_in_log_frequency_and_db() {
    // Between 40 Hz at −60 dB and 62.5 Hz at −100 dB, 50 Hz sits at
    // log(50/40)/log(62.5/40) = 1/2 of the way: −80 dB.
    let budget = parse(&chain(
        "filter: {table: [[40 Hz, -60 dB], [62.5 Hz, -100 dB]]}",
        "interference:
  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}
",
    ));
    let report = judge(&budget).unwrap();
    let filtered = source(&report, "hum").after_filter.clone().unwrap();
    assert!((filtered.rejection_db.0 - 80.0).abs() < 1e-9);
}
