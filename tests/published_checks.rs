//! The engine checked against published formulas and worked examples, each
//! in its range of validity. The source is named beside every check.

use approx::assert_relative_eq;
use cmrr_budget::budget::parse_budget;
use cmrr_budget::engine::{analyse_point, chain_response, PointAnalysis};
use cmrr_budget::model::Budget;
use cmrr_budget::stage::Point;
use std::f64::consts::PI;

fn budget(chain: &str) -> Budget {
    let text = format!(
        "name: check\nchain:\n{chain}\ninterference:\n  - {{name: hum, amplitude: 1 V rms, frequency: 50 Hz}}\n"
    );
    parse_budget(&text, "check.yaml").unwrap_or_else(|e| panic!("{e}\n{text}"))
}

fn difference_amp(r1: &str, r2: &str, r3: &str, r4: &str, opamp: &str) -> String {
    format!("  - difference_amp:\n      r1: {r1}\n      r2: {r2}\n      r3: {r3}\n      r4: {r4}\n{opamp}")
}

fn at(budget: &Budget, freq: f64) -> PointAnalysis {
    analyse_point(budget, freq).expect("the chain solves")
}

fn db(ratio: f64) -> f64 {
    20.0 * ratio.log10()
}

/// Sedra and Smith, Microelectronic Circuits, 7th ed., 2015, Sec. 2.4,
/// Exercise 2.15: R1 = R3 = 2 kΩ, R2 = R4 = 200 kΩ. Answers given there:
/// Ad = 100 V/V (40 dB); Rid = 4 kΩ; with 1 % resistors the worst-case
/// Acm = 0.04 V/V and CMRR = 68 dB (rounded, from the book's Eq. 2.19).
#[test]
fn sedra_smith_exercise_2_15() {
    let b = budget(&difference_amp(
        "2k ±1 %",
        "200k ±1 %",
        "2k ±1 %",
        "200k ±1 %",
        "",
    ));
    let analysis = at(&b, 0.0);
    assert_relative_eq!(
        analysis.differential_gain.norm(),
        100.0,
        max_relative = 1e-12
    );
    let worst_acm = analysis.worst_case() * analysis.differential_gain.norm();
    assert_relative_eq!(worst_acm, 0.04, max_relative = 0.02);
    assert!((db(1.0 / analysis.worst_case()) - 68.0).abs() < 0.5);

    // Rid: a floating differential source between the inputs draws the
    // same current out of p as it returns into n.
    let values = b.parameters.nominal_values();
    let point = Point::new(0.0, &values);
    let y = b.chain[0]
        .kind
        .input_admittance(&point, &cmrr_budget::engine::linalg::Mat2::ZERO);
    // i_p + i_n = 0 with v_p - v_n = 1: solve for v_p.
    let (a, c, d) = (y.0[0][0], y.0[1][0], y.0[1][1]);
    let v_p = d / (a + c + d);
    let i_p = a * v_p;
    assert_relative_eq!((1.0 / i_p).re, 4e3, max_relative = 1e-9);
}

/// Worst case of four resistors each within ±t: CMRR ≈ (1 + G)/(4t).
/// Pallas-Areny and Webster, "Common mode rejection ratio in differential
/// amplifiers", IEEE Trans. Instrum. Meas. 40(4), 669-676, 1991 (the
/// tolerance-limited CMRR; equation number from memory). Valid for t << 1.
#[test]
fn four_resistor_worst_case() {
    for (gain, tolerance) in [(1.0, 1e-3), (10.0, 1e-4), (100.0, 1e-3), (0.5, 5e-4)] {
        let r1 = 10e3;
        let r2 = gain * r1;
        let t = format!("±{} %", tolerance * 100.0);
        let b = budget(&difference_amp(
            &format!("{r1} {t}"),
            &format!("{r2} {t}"),
            &format!("{r1} {t}"),
            &format!("{r2} {t}"),
            "",
        ));
        let analysis = at(&b, 0.0);
        let expected = (1.0 + gain) / (4.0 * tolerance);
        assert_relative_eq!(
            1.0 / analysis.worst_case(),
            expected,
            max_relative = 5.0 * tolerance
        );
        // The nominal chain is perfectly matched: infinite CMRR.
        assert_eq!(analysis.nominal_magnitude(), 0.0);
        // RSS of four equal independent contributions is half the sum.
        assert_relative_eq!(
            analysis.rss(),
            analysis.worst_case() / 2.0,
            max_relative = 5.0 * tolerance
        );
    }
}

/// The exact common-mode gain of the four-resistor stage with an ideal
/// op-amp, Acm = (R1 R4 − R2 R3) / (R1 (R3 + R4)).
/// Pallas-Areny and Webster 1991 (as above); also Sedra and Smith, 7th ed.,
/// 2015, Sec. 2.4 (equation number from memory).
#[test]
fn exact_common_mode_gain() {
    let cases = [
        (10e3, 100e3, 10.01e3, 99.95e3),
        (1e3, 1e3, 1.002e3, 0.997e3),
        (2.2e3, 47e3, 2.21e3, 47.3e3),
    ];
    for (r1, r2, r3, r4) in cases {
        let b = budget(&difference_amp(
            &r1.to_string(),
            &r2.to_string(),
            &r3.to_string(),
            &r4.to_string(),
            "",
        ));
        let values = b.parameters.nominal_values();
        let response = chain_response(&b.chain, &Point::new(0.0, &values)).unwrap();
        let expected = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4));
        assert_relative_eq!(response.dc.re, expected, max_relative = 1e-9);
        // Ad for mismatched ratios: (R2/R1 + R4/(R3+R4) (1 + R2/R1)) / 2,
        // the average of the two input gains (same sources).
        let expected_dm = (r2 / r1 + r4 / (r3 + r4) * (1.0 + r2 / r1)) / 2.0;
        assert_relative_eq!(response.dd.re, expected_dm, max_relative = 1e-9);
    }
}

/// The op-amp's own CMRR adds to the resistors' as
/// 1/CMRR_total ≈ 1/CMRR_R + 1/CMRR_op (unknown signs: worst case adds
/// magnitudes). Pallas-Areny and Webster 1991 (as above).
#[test]
fn opamp_cmrr_adds_to_resistor_cmrr() {
    let opamp = "      opamp:\n        cmrr: 90 dB\n";
    let b = budget(&difference_amp(
        "10k ±0.05 %",
        "100k ±0.05 %",
        "10k ±0.05 %",
        "100k ±0.05 %",
        opamp,
    ));
    let analysis = at(&b, 0.0);
    let cmrr_resistors = 11.0 / (4.0 * 5e-4);
    let cmrr_opamp = 10f64.powf(90.0 / 20.0);
    let expected = 1.0 / cmrr_resistors + 1.0 / cmrr_opamp;
    assert_relative_eq!(analysis.worst_case(), expected, max_relative = 3e-3);
    // Alone, the op-amp term is referred to the input unchanged.
    let opamp_share = analysis
        .contributions
        .iter()
        .find(|c| b.parameters.get(c.param).name == "op-amp CMRR")
        .unwrap();
    assert_relative_eq!(
        opamp_share.magnitude(),
        1.0 / cmrr_opamp,
        max_relative = 1e-3
    );
}

/// Above the op-amp's CMRR corner its contribution falls 20 dB/decade
/// (single-pole CMRR roll-off; common practice, no source).
#[test]
fn opamp_cmrr_corner_slope() {
    let opamp = "      opamp:\n        cmrr: 100 dB\n        cmrr_corner: 100 Hz\n";
    let b = budget(&difference_amp("10k", "10k", "10k", "10k", opamp));
    let low = at(&b, 10e3).worst_case();
    let high = at(&b, 100e3).worst_case();
    assert!((db(high / low) - 20.0).abs() < 0.01, "{}", db(high / low));
}

/// Source-impedance imbalance against the common-mode input impedance:
/// CMRR ≈ |Zc / ΔZs| for Zs << Zc, falling 20 dB/decade once a capacitance
/// sets Zc. Huhta and Webster, "60-Hz interference in electrocardiography",
/// IEEE Trans. Biomed. Eng. 20(2), 91-101, 1973 (the potential-divider
/// model of source imbalance).
#[test]
fn source_imbalance_against_input_capacitance() {
    let chain = format!(
        "  - source:\n      resistance: {{p: 51k, n: 61k}}\n      input_capacitance: 200p\n{}",
        difference_amp("100M", "100M", "100M", "100M", "")
    );
    let b = budget(&chain);
    let s = |freq: f64| num_complex::Complex64::new(0.0, 2.0 * PI * freq);
    for freq in [50.0, 500.0, 5e3, 50e3] {
        // Exact divider form, the difference stage's 200 MΩ inputs included
        // in Zc; divided by the differential gain to refer it to the input.
        let zc = 1.0 / (s(freq) * 200e-12 + 1.0 / 200e6);
        let (p, n) = (zc / (zc + 51e3), zc / (zc + 61e3));
        let exact = ((p - n) / ((p + n) / 2.0)).norm();
        assert_relative_eq!(at(&b, freq).nominal_magnitude(), exact, max_relative = 1e-6);
    }
    for freq in [50.0, 500.0] {
        // The approximation, within its first-order error 2 Zs/Zc.
        let zc = 1.0 / (2.0 * PI * freq * 200e-12);
        let approximate = zc / 10e3;
        let error = 2.0 * 61e3 / zc;
        assert_relative_eq!(
            1.0 / at(&b, freq).nominal_magnitude(),
            approximate,
            max_relative = error
        );
    }
    let slope = db(at(&b, 500.0).nominal_magnitude() / at(&b, 50.0).nominal_magnitude());
    assert!((slope - 20.0).abs() < 0.1, "{slope}");
}

/// The AAMI/IEC ECG common-mode test network: 51 kΩ ∥ 47 nF in series with
/// one lead (AAMI TIR60 describes the test; IEC 60601-2-25/-2-27 versions
/// from memory). With a common-mode input impedance Zcm per input, the
/// converted differential voltage is ≈ Vcm · Zimb / (Zimb + Zcm).
/// Spinelli and Mayosky, IEEE Trans. Biomed. Eng. 52(8), 2005 (the
/// imbalance-divider result).
#[test]
fn ecg_test_imbalance() {
    let chain = format!(
        "  - source:\n      resistance: {{p: 51k, n: 1m}}\n      capacitance: {{p: 47n, n: 1p}}\n      input_resistance: 100M\n      input_capacitance: 10p\n{}",
        difference_amp("1G", "1G", "1G", "1G", "")
    );
    let b = budget(&chain);
    let f = 50.0;
    let s = num_complex::Complex64::new(0.0, 2.0 * PI * f);
    let z_imb = 1.0 / (1.0 / 51e3 + s * 47e-9);
    // The difference stage's own 2 GΩ common-mode input adds in parallel.
    let z_cm = 1.0 / (1.0 / 100e6 + 1.0 / 2e9 + s * 10e-12);
    let expected = (z_imb / (z_imb + z_cm)).norm();
    assert_relative_eq!(at(&b, f).nominal_magnitude(), expected, max_relative = 2e-3);
}

/// A perfectly matched chain has an infinite CMRR, not NaN.
#[test]
fn matched_chain_is_infinite() {
    let chain = format!(
        "  - source:\n      resistance: 1k\n      filter_capacitance: 1n\n{}",
        difference_amp(
            "10k",
            "100k",
            "10k",
            "100k",
            "      opamp:\n        open_loop_gain: 100 dB\n        gain_bandwidth: 1 MHz\n"
        )
    );
    let b = budget(&chain);
    for freq in [0.0, 50.0, 1e5] {
        let analysis = at(&b, freq);
        assert_eq!(analysis.worst_case(), 0.0);
        assert!(analysis.worst_case().is_finite());
    }
}

fn three_opamp(rg: &str, first: &str, difference: &str) -> String {
    format!(
        "  - three_opamp_inamp:\n      rg: {rg}\n      rf1: 24.9k\n      rf2: 24.9k\n{first}      difference_stage:\n{difference}"
    )
}

fn unity_difference_stage(tolerance: &str) -> String {
    format!("        r1: 10k {tolerance}\n        r2: 10k {tolerance}\n        r3: 10k {tolerance}\n        r4: 10k {tolerance}\n")
}

/// Cascaded stages: 1/CMRR = 1/CMRR_1 + 1/(G1 CMRR_2) — the first stage's
/// differential gain divides the second stage's conversion, and with ideal
/// op-amps the first stage passes common mode with gain exactly 1.
/// Pallas-Areny and Webster, "Common mode rejection ratio for cascaded
/// differential amplifier stages", IEEE Trans. Instrum. Meas. 40(4),
/// 677-681, 1991.
#[test]
fn inamp_cmrr_scales_with_first_stage_gain() {
    let t = 1e-3;
    let diff_cmrr = 2.0 / (4.0 * t); // unity-gain difference stage, four resistors at ±t
                                     // RG = 1 TΩ stands for no gain resistor (G1 = 1).
    for rg in [1e12, 5.533e3, 503.0, 49.85] {
        let g1 = 1.0 + 2.0 * 24.9e3 / rg;
        let b = budget(&three_opamp(
            &format!("{rg}"),
            "",
            &unity_difference_stage("±0.1 %"),
        ));
        let analysis = at(&b, 0.0);
        let expected = g1 * diff_cmrr;
        assert_relative_eq!(
            1.0 / analysis.worst_case(),
            expected,
            max_relative = 5.0 * t
        );
        // The chain's differential gain is G1 times the unity second stage.
        assert_relative_eq!(analysis.differential_gain.norm(), g1, max_relative = 1e-9);
    }
}

/// The first stage's own limit: 1/CMRR_first ≈ (1/CMRR_A1 − 1/CMRR_A2) +
/// (1/A1(jf) − 1/A2(jf)), independent of G1; with single-pole op-amps the
/// second term gives f |1/GBW1 − 1/GBW2|, rising 20 dB/decade (CMRR
/// falling). Pallas-Areny and Webster 1991 (cascaded stages, as above);
/// the op-amp mismatch term is common practice, no source.
#[test]
fn inamp_first_stage_mismatch_is_independent_of_gain() {
    let first =
        "      first_stage_opamps:\n        gain_bandwidth: 1 MHz ±20 %\n        cmrr: 100 dB\n";
    let mut previous: Option<f64> = None;
    for rg in ["5.533k", "503", "49.85"] {
        let b = budget(&three_opamp(rg, first, &unity_difference_stage("")));
        let analysis = at(&b, 1e3);
        let share = |name: &str| {
            analysis
                .contributions
                .iter()
                .find(|c| b.parameters.get(c.param).name == name)
                .unwrap()
                .magnitude()
        };
        // GBW −20 % on one op-amp alone: 1 kHz × (1/0.8 MHz − 1/1 MHz).
        let gbw_term = 1e3 * (1.0 / 0.8e6 - 1.0 / 1e6);
        assert_relative_eq!(share("A1 gain-bandwidth"), gbw_term, max_relative = 0.01);
        assert_relative_eq!(share("A2 gain-bandwidth"), gbw_term, max_relative = 0.01);
        // An op-amp's CMRR alone, referred to the input unchanged.
        assert_relative_eq!(share("A1 CMRR"), 1e-5, max_relative = 0.01);
        if let Some(previous) = previous {
            assert_relative_eq!(share("A1 gain-bandwidth"), previous, max_relative = 0.01);
        }
        previous = Some(share("A1 gain-bandwidth"));
        // 20 dB/decade: ten times the frequency, ten times the conversion.
        let high = at(&b, 10e3);
        let high_gbw = high
            .contributions
            .iter()
            .find(|c| b.parameters.get(c.param).name == "A1 gain-bandwidth")
            .unwrap()
            .magnitude();
        assert_relative_eq!(
            high_gbw / share("A1 gain-bandwidth"),
            10.0,
            max_relative = 0.01
        );
    }
}

/// An integrated in-amp block reproduces its stated CMRR at DC, takes the
/// minimum from its table at the configured gain (interpolated in dB
/// against log gain; common practice, no source), and its gain law.
#[test]
fn integrated_inamp_block() {
    let chain = "  - integrated_inamp:\n      gain_resistor: 400\n      gain_law: {base: 1, constant: 40k}\n      cmrr_by_gain:\n        - {gain: 10, cmrr: 95 dB}\n        - {gain: 1000, cmrr: 125 dB}\n      cmrr_corner: 200 Hz\n";
    let b = budget(chain);
    let analysis = at(&b, 0.0);
    assert_relative_eq!(analysis.differential_gain.re, 101.0, max_relative = 1e-12);
    // Gain 101 sits at log10(101) = 2.0043 of the table: 95 + 30 × 1.0043/2.
    let expected_db = 95.0 + 30.0 * (101f64.log10() - 1.0) / 2.0;
    assert_relative_eq!(
        db(1.0 / analysis.worst_case()),
        expected_db,
        max_relative = 1e-9
    );
    // A decade above a decade above the corner: ~20 dB lower.
    let high = at(&b, 20e3);
    assert!((db(high.worst_case() / at(&b, 2e3).worst_case()) - 20.0).abs() < 0.05);
}

fn pair(fields: &str) -> Budget {
    budget(&format!("  - differential_pair:\n{fields}"))
}

/// kT/q at 300 K is 25.85 mV (CODATA 2018 constants; the figure quoted in
/// Gray, Hurst, Lewis and Meyer, Analysis and Design of Analog Integrated
/// Circuits, 5th ed., 2009, Ch. 1, from memory).
const VT_300K: f64 = 1.380649e-23 * 300.0 / 1.602176634e-19;

/// Emitter-coupled pair, single-ended output:
/// Acm = −gm RC / (1 + 2 gm Z_EE (1 + 1/β)), Add = gm RC / 2, so
/// CMRR = 1/2 + gm Z_EE (1 + 1/β). Gray, Hurst, Lewis and Meyer, 5th ed.,
/// 2009, Sec. 3.5 (section from memory); exact with r_o → ∞.
#[test]
fn pair_single_ended_cmrr() {
    for (beta, tail) in [(100.0, 10e3), (300.0, 100e3), (50.0, 1e3)] {
        let b = pair(&format!(
            "      device: bjt\n      tail_current: 1 mA\n      beta: {beta}\n      early_voltage: 1e12 V\n      load_resistance: 10k\n      output: single_ended\n      tail: {{resistor: {tail}}}\n"
        ));
        let analysis = at(&b, 0.0);
        let ic = 0.5e-3 * beta / (beta + 1.0);
        let gm = ic / VT_300K;
        let expected = 0.5 + gm * tail * (1.0 + 1.0 / beta);
        assert_relative_eq!(
            1.0 / analysis.nominal_magnitude(),
            expected,
            max_relative = 1e-6
        );
        assert_relative_eq!(
            analysis.differential_gain.re,
            gm * 10e3 / 2.0,
            max_relative = 1e-6
        );
    }
}

/// Differential output with mismatch: the common-mode-to-differential gain
/// is −(gm1 RC1 − gm2 RC2) / (1 + Z_EE (gm1 + gm2 + 1/r_π1 + 1/r_π2)), a
/// signed sum, so CMRR ≈ 2 gm Z_EE / |ΔRC/RC + Δgm/gm| and opposite
/// mismatches cancel. Sedra and Smith, Microelectronic Circuits, 7th ed.,
/// 2015, Ch. 9 (RD and gm mismatch, from memory); Razavi, Design of Analog
/// CMOS Integrated Circuits, 2nd ed., 2017, Sec. 4.3 (from memory).
#[test]
fn pair_differential_output_mismatch() {
    let fields = "      device: small_signal\n      gm: 20 mS\n      r_pi: 5k\n      gm_mismatch: 2 %\n      load_resistance: {p: 9.9k, n: 10.1k}\n      output: differential\n      tail: {output_resistance: 50k}\n";
    let b = pair(fields);
    let mut values = b.parameters.nominal_values();
    let mismatch = b
        .parameters
        .iter()
        .find(|(_, p)| p.name == "gm mismatch")
        .unwrap()
        .0;
    for delta in [0.0, 0.02, -0.02] {
        values[mismatch.0] = delta;
        let response = chain_response(&b.chain, &Point::new(0.0, &values)).unwrap();
        let (gm1, gm2) = (20e-3 * (1.0 + delta / 2.0), 20e-3 * (1.0 - delta / 2.0));
        let (rc1, rc2) = (9.9e3, 10.1e3);
        // Output taken as (c2 − c1), so the sign is opposite to (c1 − c2).
        let expected = (gm1 * rc1 - gm2 * rc2) / (1.0 + 50e3 * (gm1 + gm2 + 2.0 / 5e3));
        assert_relative_eq!(response.dc.re, expected, epsilon = 1e-12);
    }
    // δ = +2 % on gm1 against RC1 2 % low: the products match and cancel.
    values[mismatch.0] = 0.02;
    let cancelled = chain_response(&b.chain, &Point::new(0.0, &values)).unwrap();
    assert!(cancelled.dc.norm() < 2e-4 * 0.02, "{}", cancelled.dc);
    // RC mismatch alone: CMRR ≈ 2 gm Z_EE / (ΔRC/RC) = 2 × 0.02 × 50k / 0.02 ... to first order.
    values[mismatch.0] = 0.0;
    let alone = chain_response(&b.chain, &Point::new(0.0, &values)).unwrap();
    let cmrr = (alone.dd / alone.dc).norm();
    let approx = 2.0 * 20e-3 * 50e3 / 0.02;
    assert_relative_eq!(cmrr, approx, max_relative = 0.05);
}

/// Above 1/(2π R_out C_tail) the tail's capacitance takes over and the
/// CMRR falls 20 dB/decade (common practice, no source).
#[test]
fn pair_tail_pole() {
    let b = pair("      device: small_signal\n      gm: 20 mS\n      load_resistance: 10k\n      output: single_ended\n      tail: {output_resistance: 1M, capacitance: 10 pF}\n");
    let corner = 1.0 / (2.0 * PI * 1e6 * 10e-12);
    let low = at(&b, corner / 100.0).nominal_magnitude();
    let high = [10.0, 100.0].map(|k| at(&b, corner * k).nominal_magnitude());
    assert!((db(high[1] / high[0]) - 20.0).abs() < 0.1);
    // At the corner itself the conversion has risen by 3 dB.
    let at_corner = at(&b, corner).nominal_magnitude();
    assert!(
        (db(at_corner / low) - 3.01).abs() < 0.05,
        "{}",
        db(at_corner / low)
    );
}

/// Current-source output resistance: degenerated r_o (1 + gm RE') + RE'
/// with RE' = RE ∥ r_π, tending to (β + 1) r_o for large RE; BJT cascode
/// ≈ β r_o; MOSFET cascode ≈ gm r_o². Gray, Hurst, Lewis and Meyer, 5th
/// ed., 2009, Ch. 4 (from memory).
#[test]
fn tail_output_resistance_forms() {
    use cmrr_budget::stage::StageKind;
    let tail_of = |tail: &str, device: &str| {
        let b = pair(&format!(
            "{device}      load_resistance: 10k\n      output: single_ended\n      tail: {tail}\n"
        ));
        let values = b.parameters.nominal_values();
        let StageKind::DifferentialPair(p) = &b.chain[0].kind else {
            unreachable!()
        };
        p.tail_resistance(&Point::new(0.0, &values))
    };
    let bjt = "      device: bjt\n      tail_current: 1 mA\n      beta: 100\n      early_voltage: 100 V\n";
    let (current, va, beta) = (1e-3, 50.0, 100.0);
    let ro = va / current;
    let gm = current / VT_300K;
    let r_pi = beta / gm;
    assert_relative_eq!(
        tail_of("{current_source: {early_voltage: 50 V}}", bjt),
        ro,
        max_relative = 1e-12
    );
    let re = 1e3;
    let re_eff = re * r_pi / (re + r_pi);
    assert_relative_eq!(
        tail_of(
            "{degenerated_source: {early_voltage: 50 V, degeneration: 1k, beta: 100}}",
            bjt
        ),
        ro * (1.0 + gm * re_eff) + re_eff,
        max_relative = 1e-12
    );
    let large = tail_of(
        "{degenerated_source: {early_voltage: 50 V, degeneration: 1G, beta: 100}}",
        bjt,
    );
    assert_relative_eq!(large, (beta + 1.0) * ro, max_relative = 0.01);
    // β r_o holds when r_o ≫ r_π (here 500 kΩ against 2.6 kΩ: within 1 %).
    let cascode = tail_of("{cascode: {early_voltage: 500 V, beta: 100}}", bjt);
    assert_relative_eq!(cascode, beta * 500.0 / current, max_relative = 0.01);
    let mos = "      device: mosfet\n      tail_current: 1 mA\n      overdrive: 200 mV\n      early_voltage: 20 V\n";
    let mos_cascode = tail_of("{cascode: {early_voltage: 20 V, overdrive: 200 mV}}", mos);
    let (gm_mos, ro_mos) = (2.0 * 1e-3 / 0.2, 20.0 / 1e-3);
    assert_relative_eq!(mos_cascode, gm_mos * ro_mos * ro_mos, max_relative = 0.01);
}

/// Resistor ratio drift adds to the matching tolerance: each resistor moves
/// by up to TC × ΔT, so four separate parts within ±t and ±tcr give
/// CMRR ≈ (1 + G)/(4 (t + tcr ΔT)) at the end of the range, and a matched
/// network, whose shared coefficient cancels in the ratios, gives
/// (1 + G)/(4 (t + tracking/2 × ΔT)). The tolerance-limited form is from
/// Pallas-Areny and Webster 1991 (as above); drift adding to tolerance is
/// common practice, no source.
#[test]
fn resistor_drift_separate_parts_and_network() {
    use cmrr_budget::engine::analyse_point_at;
    let t = 1e-4;
    let delta_t = 45.0; // 25 °C reference, 70 °C hot end
    let header =
        "name: drift\ntemperature: {reference: 25 degC, range: [0 degC, 70 degC]}\nchain:\n";
    let tail = "interference:\n  - {name: hum, amplitude: 1 V rms, frequency: 50 Hz}\n";
    let stage = |drift: &str| {
        format!("  - difference_amp:\n      r1: 10k ±0.01 %\n      r2: 100k ±0.01 %\n      r3: 10k ±0.01 %\n      r4: 100k ±0.01 %\n{drift}")
    };
    let separate = parse_budget(
        &format!("{header}{}{tail}", stage("      tcr: 25 ppm/K\n")),
        "d.yaml",
    )
    .unwrap();
    let network = parse_budget(
        &format!(
            "{header}{}{tail}",
            stage("      network: {tcr: 25 ppm/K, tracking: 2 ppm/K}\n")
        ),
        "n.yaml",
    )
    .unwrap();
    // At the reference temperature the coefficients contribute nothing.
    for b in [&separate, &network] {
        let room = at(b, 0.0);
        assert_relative_eq!(
            1.0 / room.worst_case(),
            11.0 / (4.0 * t),
            max_relative = 1e-3
        );
    }
    let hot_separate = analyse_point_at(&separate, 0.0, delta_t).unwrap();
    let expected_separate = 11.0 / (4.0 * (t + 25e-6 * delta_t));
    assert_relative_eq!(
        1.0 / hot_separate.worst_case(),
        expected_separate,
        max_relative = 0.01
    );
    let hot_network = analyse_point_at(&network, 0.0, delta_t).unwrap();
    let expected_network = 11.0 / (4.0 * (t + 1e-6 * delta_t));
    assert_relative_eq!(
        1.0 / hot_network.worst_case(),
        expected_network,
        max_relative = 0.01
    );
    // The shared coefficient alone converts nothing (it scales all four).
    let shared = hot_network
        .contributions
        .iter()
        .find(|c| network.parameters.get(c.param).name == "network TC (shared)")
        .unwrap();
    assert!(shared.magnitude() < 1e-12, "{}", shared.magnitude());
}

/// MOS pair with a transconductance mismatch and differential output:
/// CMRR ≈ (1 + 2 gm R_SS)/(Δgm/gm). Razavi, Design of Analog CMOS
/// Integrated Circuits, 2nd ed., 2017, Sec. 4.3 (from memory). Here
/// gm = 2 I_D/Vov = 5 mS, R_SS = 20 kΩ, Δgm/gm = 1 %, r_o → ∞.
#[test]
fn mos_pair_gm_mismatch() {
    let b = pair("      device: mosfet\n      tail_current: 1 mA\n      overdrive: 200 mV\n      early_voltage: 1e12 V\n      gm_mismatch: 1 %\n      load_resistance: 5k\n      output: differential\n      tail: {resistor: 20k}\n");
    let analysis = at(&b, 0.0);
    let gm = 2.0 * 0.5e-3 / 0.2;
    let expected = (1.0 + 2.0 * gm * 20e3) / 0.01;
    assert_relative_eq!(1.0 / analysis.worst_case(), expected, max_relative = 0.01);
}

/// A later stage's conversion is referred to the input through the stages
/// before it: a converter's own 1/CMRR arrives multiplied by Acc/Add of
/// what precedes it. Pallas-Areny and Webster 1991 (cascaded stages, as
/// above).
#[test]
fn converter_cmrr_referred_through_the_gain_ahead() {
    let front = "      device: small_signal\n      gm: 20 mS\n      load_resistance: 10k\n      output: differential\n      tail: {output_resistance: 100k}\n";
    let with_adc = budget(&format!(
        "  - differential_pair:\n{front}  - adc: {{span: 5 V, bits: 16, cmrr: 80 dB}}\n"
    ));
    let alone = pair(front);
    let values = alone.parameters.nominal_values();
    let response = chain_response(&alone.chain, &Point::new(0.0, &values)).unwrap();
    let analysis = at(&with_adc, 0.0);
    let adc = analysis
        .contributions
        .iter()
        .find(|c| with_adc.parameters.get(c.param).name == "converter CMRR")
        .unwrap();
    let expected = 1e-4 * (response.cc / response.dd).norm();
    assert_relative_eq!(adc.magnitude(), expected, max_relative = 1e-6);
}

/// A pair's collectors sit at the supply less I_C R_C only when nothing
/// loads them. Feeding a unity difference amplifier, Q2's collector (the
/// amplifier's p pin) sees R3 + R4 to ground, so by Thevenin
/// V_C2 = (V_S/R_C − I_C)/(1/R_C + 1/(R3 + R4)); Q1's (the n pin) sees the
/// amplifier's inverting-input current (2 V_C1 − V_C2)/(R1 + R2) of an
/// ideal op-amp, so V_C1 = (V_S/R_C − I_C + V_C2/(R1 + R2))/(1/R_C +
/// 2/(R1 + R2)). The collector-emitter check uses these levels, and the
/// amplifier's op-amp input sits at V_C2 R4/(R3 + R4). (Thevenin's theorem
/// and the ideal op-amp's virtual short: common practice, no source; r_o
/// made infinite so the collectors act as current sources.)
#[test]
fn headroom_carries_a_pair_s_loaded_collector_levels_downstream() {
    use cmrr_budget::engine::check_headroom;
    let chain = "  - differential_pair:\n      label: pair\n      device: bjt\n      tail_current: 1 mA\n      beta: 100\n      early_voltage: 1e12 V\n      load_resistance: 10k\n      output: differential\n      supply: 12 V\n      input_drop: 650 mV\n      saturation: 20 V\n      tail: {resistor: 10k}\n  - difference_amp:\n      label: amplifier\n      r1: 10k\n      r2: 10k\n      r3: 10k\n      r4: 10k\n      opamp: {open_loop_gain: 240 dB, gain_bandwidth: 1 GHz, input_range: [-1 V, 1 V]}\n";
    let b = budget(chain);
    let findings = check_headroom(&b).unwrap();
    let centre = |node: &str| {
        let f = findings
            .iter()
            .find(|f| f.node == node)
            .unwrap_or_else(|| panic!("no finding for {node}: {findings:?}"));
        (f.low_v + f.high_v) / 2.0
    };
    let (vs, rc, r) = (12.0, 10e3, 20e3);
    let ic = 0.5e-3 * 100.0 / 101.0;
    let vc2 = (vs / rc - ic) / (1.0 / rc + 1.0 / r);
    let vc1 = (vs / rc - ic + vc2 / r) / (1.0 / rc + 2.0 / r);
    assert_relative_eq!(
        centre("Q2 collector-emitter"),
        vc2 + 0.65,
        max_relative = 1e-6
    );
    assert_relative_eq!(
        centre("Q1 collector-emitter"),
        vc1 + 0.65,
        max_relative = 1e-6
    );
    assert_relative_eq!(centre("op-amp inputs"), vc2 / 2.0, max_relative = 1e-6);
    // Unloaded, the collectors would sit 2.3 V higher.
    assert!(vs - ic * rc - vc2 > 2.2);
}

/// A difference amplifier's reference pin, at the bottom of R4, reaches the
/// output with the gain (R3/(R3 + R4))(1 + R2/R1) — 1 when R2/R1 = R4/R3 —
/// and the op-amp inputs at Vref R3/(R3 + R4) (superposition with an ideal
/// op-amp: common practice, no source). An integrated in-amp's output rests
/// at its reference. The headroom check centres each node there.
#[test]
fn reference_voltage_sets_where_outputs_rest() {
    use cmrr_budget::engine::check_headroom;
    let opamp = "      reference_voltage: 2 V\n      opamp: {open_loop_gain: 240 dB, gain_bandwidth: 1 GHz, input_range: [-0.1 V, 0.1 V], output_swing: [-0.1 V, 0.1 V]}\n";
    let b = budget(&difference_amp("10k", "100k", "10k", "90k", opamp));
    let findings = check_headroom(&b).unwrap();
    let centre = |node: &str| {
        let f = findings.iter().find(|f| f.node == node).unwrap();
        (f.low_v + f.high_v) / 2.0
    };
    assert_relative_eq!(
        centre("op-amp output"),
        2.0 * 0.1 * 11.0,
        max_relative = 1e-9
    );
    assert_relative_eq!(centre("op-amp inputs"), 2.0 * 0.1, max_relative = 1e-9);
    let b = budget("  - integrated_inamp: {gain: 100, cmrr: 100 dB, reference_voltage: 2.5 V, output_swing: [4.9 V, 4.95 V]}\n");
    let findings = check_headroom(&b).unwrap();
    let f = findings.iter().find(|f| f.node == "output").unwrap();
    assert_relative_eq!((f.low_v + f.high_v) / 2.0, 2.5, max_relative = 1e-12);
}
