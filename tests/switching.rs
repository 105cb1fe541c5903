//! Switching sources (issue 14): the residue a periodic common-mode
//! trapezoid leaves, checked against closed forms derived here, against
//! Parseval's theorem, and against the sine budget it must reduce to.

use assert_cmd::Command;
use cmrr_budget::budget::parse_budget;
use cmrr_budget::model::Budget;
use cmrr_budget::switching::{analyse_residue, settling_time, Measure};
use cmrr_budget::verdict::{judge, judge_in_full, Operating, Status};

fn parse(text: &str) -> Budget {
    parse_budget(text, "inline.yaml").unwrap_or_else(|e| panic!("{e}"))
}

/// Two RC legs (R = 1 kΩ, source and series resistor, into C to ground, the p leg's C larger by
/// `delta`) read by an ideal unity-gain in-amp (infinite input impedance,
/// bandwidth and CMRR), so the residue is exactly `v_p − v_n`.
fn rc_pair(delta: f64, switching: &str) -> Budget {
    parse(&format!(
        "name: RC mismatch
chain:
  - source:
      resistance: 500
      series_resistance: 500
      filter_capacitance: {{p: {} nF, n: 1 nF}}
  - integrated_inamp:
      gain: 1
switching:
{switching}
",
        1.0 + delta
    ))
}

/// A 1 V trapezoid at 10 kHz with 100 ns edges: 50 time constants of the
/// RC legs at each level, so each edge's residue has died before the next.
const ONE_VOLT_AT_10_KHZ: &str = "  - name: edge
    low: 0 V
    high: 1 V
    frequency: 10 kHz
    duty: 50 %
    rise_time: 100 ns
    fall_time: 100 ns";

/// The RC leg's response to the trapezoid's rising ramp (slope `V/t_r`
/// from 0 at t = 0), solved by hand: during the ramp
/// `v = a(t − τ(1 − e^{−t/τ}))`, after it `v = V − (aτ)(e^{t_r/τ} − 1)e^{−t/τ}`
/// (the ramp's response less the same ramp delayed by `t_r`). Valid while
/// the previous edges have died away (here 50 time constants later).
fn ramp_response(t: f64, tau: f64, step: f64, rise: f64) -> f64 {
    let a = step / rise;
    if t <= rise {
        a * (t - tau * (1.0 - (-t / tau).exp()))
    } else {
        step - a * tau * ((rise / tau).exp() - 1.0) * (-t / tau).exp()
    }
}

/// Issue 14, check 4: for one RC-mismatch conversion the residue after an
/// edge is the difference of the two legs' exact responses. For a unit
/// step (`t_r → 0`) and τ_p = τ + Δτ this is `e^{−t/τ} − e^{−t/(τ+Δτ)}`,
/// which to first order in Δτ is `−(Δτ/τ)(t/τ)e^{−t/τ}`: the residue
/// rises to `(Δτ/τ)/e` at t = τ and decays (derivation: d/dτ e^{−t/τ} =
/// (t/τ²)e^{−t/τ}). The tool's residue must match the exact two-leg form,
/// ramp included, over the whole high level.
#[test]
fn issue_14_rc_mismatch_residue_matches_its_closed_form() {
    let delta = 0.02;
    let budget = rc_pair(delta, ONE_VOLT_AT_10_KHZ);
    let source = &budget.switching[0];
    let analysis = analyse_residue(&budget, source, 0.0).unwrap();
    let samples = &analysis.nominal.samples;
    let step = source.waveform.period_s() / samples.len() as f64;
    let (tau_n, tau_p) = (1e-6, 1e-6 * (1.0 + delta));
    let (_, fall) = source
        .waveform
        .interval_after(cmrr_budget::model::Edge::Rising);
    let mut largest: f64 = 0.0;
    let mut worst: f64 = 0.0;
    let mut away_from_the_ramp: f64 = 0.0;
    for (i, value) in samples.iter().enumerate() {
        let t = i as f64 * step;
        if t >= fall {
            break;
        }
        let exact = ramp_response(t, tau_p, 1.0, 100e-9) - ramp_response(t, tau_n, 1.0, 100e-9);
        largest = largest.max(exact.abs());
        let error = (value - exact).abs();
        worst = worst.max(error);
        if t > 3.0 * 100e-9 && t < fall - 3.0 * 100e-9 {
            away_from_the_ramp = away_from_the_ramp.max(error);
        }
    }
    // Everywhere within the truncation bound the report states; away from
    // the edges' corners (where the omitted harmonics ring) to 1e-7 of the
    // peak.
    assert!(
        worst <= analysis.truncation_v,
        "{worst:e} > {:e}",
        analysis.truncation_v
    );
    assert!(
        away_from_the_ramp <= 1e-7 * largest,
        "{away_from_the_ramp:e} against a peak of {largest:e}"
    );
    // The first-order form's peak, (Δτ/τ)/e, within the second-order
    // term and the ramp's rounding (a few per cent at Δτ/τ = 2 %).
    let first_order = delta / std::f64::consts::E;
    assert!(
        (largest / first_order - 1.0).abs() < 0.05,
        "{largest} vs {first_order}"
    );
}

/// The settling time after the rising edge against the closed form's own
/// last crossing of the band, found by bisection on the formula.
#[test]
fn issue_14_settling_time_matches_the_closed_form_crossing() {
    let delta = 0.02;
    let budget = rc_pair(delta, ONE_VOLT_AT_10_KHZ);
    let source = &budget.switching[0];
    let analysis = analyse_residue(&budget, source, 0.0).unwrap();
    let band = 1e-4;
    let residue = |t: f64| {
        (ramp_response(t, 1e-6 * (1.0 + delta), 1.0, 100e-9) - ramp_response(t, 1e-6, 1.0, 100e-9))
            .abs()
    };
    // The residue peaks near τ and then decays monotonically: bisect on
    // the decaying side.
    let (mut low, mut high) = (1e-6, 40e-6);
    for _ in 0..200 {
        let mid = 0.5 * (low + high);
        if residue(mid) > band {
            low = mid;
        } else {
            high = mid;
        }
    }
    let settled = settling_time(
        &analysis.nominal.samples,
        &source.waveform,
        cmrr_budget::model::Edge::Rising,
        band,
    )
    .unwrap();
    let step = source.waveform.period_s() / analysis.nominal.samples.len() as f64;
    assert!(
        (settled - low).abs() < step,
        "{settled:e} vs {low:e} (step {step:e})"
    );
}

/// Parseval's theorem (e.g. Oppenheim and Willsky, "Signals and Systems",
/// 2nd ed., 1997, eq. 3.67): the residue's rms from its harmonics equals
/// the rms of its samples over the period, and the sampling window's mean
/// from the harmonics equals the samples' mean over the window.
#[test]
fn issue_14_parseval_and_the_window_mean_agree_with_the_samples() {
    let budget = rc_pair(
        0.05,
        "  - name: edge
    low: -2 V
    high: 3 V
    frequency: 25 kHz
    duty: 30 %
    rise_time: 40 ns
    fall_time: 90 ns",
    );
    let source = &budget.switching[0];
    let period = source.waveform.period_s();
    let analysis = analyse_residue(&budget, source, 0.0).unwrap();
    let r = &analysis.nominal;
    let from_samples =
        (r.samples.iter().map(|v| v * v).sum::<f64>() / r.samples.len() as f64).sqrt();
    let from_harmonics = Measure::Rms.of(r, period);
    assert!((from_samples / from_harmonics - 1.0).abs() < 1e-9);
    let window = Measure::WindowMean {
        start_s: 4e-6,
        width_s: 2e-6,
    };
    let step = period / r.samples.len() as f64;
    let (first, last) = (
        (4e-6 / step).round() as usize,
        (6e-6 / step).round() as usize,
    );
    let mean: f64 = r.samples[first..last].iter().sum::<f64>() / (last - first) as f64;
    assert!((window.of(r, period) - mean.abs()).abs() < 1e-3 * mean.abs());
}

/// Issue 14, check 4: the sine case reduces to today's budget figure. A
/// switching source summed only to its fundamental is a sine of amplitude
/// `2|c_1|` (levels symmetric about zero, so no mean is left); its peak
/// residue referred to the output must equal the sine budget's peak error
/// RTO for that sine, here with a nominal imbalance
/// (0.1 % in one series resistor) through a difference amplifier.
#[test]
fn issue_14_a_fundamental_alone_is_the_sine_budget() {
    let w = cmrr_budget::model::Trapezoid {
        low_v: -5.0,
        high_v: 5.0,
        frequency_hz: 20e3,
        duty: 0.5,
        rise_s: 1e-6,
        fall_s: 1e-6,
    };
    let amplitude = 2.0 * w.harmonic(1).norm();
    let budget = parse(&format!(
        "name: fundamental
chain:
  - source:
      resistance: 10
      series_resistance: {{p: 100.1, n: 100}}
      filter_capacitance: 1 nF
  - difference_amp:
      r1: 1k
      r2: 20k
      r3: 1k
      r4: 20k
      opamp: {{open_loop_gain: 100 dB, gain_bandwidth: 10 MHz}}
interference:
  - name: the fundamental as a sine
    amplitude: {amplitude} V pk
    frequency: 20 kHz
switching:
  - name: the fundamental alone
    low: -5 V
    high: 5 V
    frequency: 20 kHz
    duty: 50 %
    rise_time: 1 us
    fall_time: 1 us
    harmonics_to: 30 kHz
"
    ));
    let report = judge(&budget).unwrap();
    let sine = report.results[0].error_rto_v.nominal;
    let switching = &report.switching[0];
    assert_eq!(switching.harmonics, 1);
    let residue_rto = switching.reference.peak_rti_v.nominal * switching.differential_gain;
    // 4,096 samples per period: the sampled peak is within 1 − cos(π/4096)
    // of the true one.
    assert!(
        (residue_rto / sine - 1.0).abs() < 1e-6,
        "{residue_rto} vs {sine}"
    );
}

/// The motor-shunt example answers its blanking time (README, "Switching
/// edges"): the residue settles into 0.5 % of full scale within its 5 µs
/// blanking after both edges at the worst corner, and the check is met.
#[test]
fn issue_14_motor_shunt_answers_its_blanking_time() {
    let path =
        std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("budgets/motor-shunt.yaml");
    let budget = cmrr_budget::budget::load_budget(&path).unwrap();
    let (report, judged) = judge_in_full(&budget, Operating::OverRange).unwrap();
    let s = &report.switching[0];
    let settling = s.reference.settling.as_ref().unwrap();
    for after in [
        &settling.after_rising_s,
        settling.after_falling_s.as_ref().unwrap(),
    ] {
        let t = after.worst_corner.unwrap();
        assert!(t > 1e-6 && t < 5e-6, "{t}");
    }
    assert!(s.requirement.as_ref().unwrap().met);
    assert_eq!(judged.len(), 1);
    assert_ne!(report.verdict.status, Status::DoesNotHold);
}

fn cmrr() -> Command {
    let mut command = Command::cargo_bin("cmrr").unwrap();
    command.current_dir(env!("CARGO_MANIFEST_DIR"));
    command
}

#[test]
fn residue_refuses_a_budget_without_switching_sources() {
    let out = cmrr()
        .args(["residue", "budgets/load-cell-scale.yaml"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let text = String::from_utf8(out.stderr).unwrap();
    assert!(text.contains("names no switching source"), "{text}");
}

#[test]
fn residue_writes_a_plot_with_its_title_and_band() {
    let dir = std::env::temp_dir().join(format!("cmrr-residue-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let plot = dir.join("residue.svg");
    let out = cmrr()
        .args(["residue", "budgets/motor-shunt.yaml", "--plot"])
        .arg(&plot)
        .args(["--format", "json", "--samples", "16"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let svg = std::fs::read_to_string(&plot).unwrap();
    assert!(svg.contains("allowed error ±500 µV"));
    assert!(svg.contains("settled"));
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(json["report"], "residue");
    assert_eq!(
        json["sources"][0]["waveforms"]["common_mode_v"]
            .as_array()
            .unwrap()
            .len(),
        16
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

/// A switching level past the extra-low-voltage limits (60 V DC, 42.4 V
/// peak alternating: common practice, from memory, local codes govern)
/// carries the high-voltage caution; a 48 V bus switching 0 to 48 V does
/// not (48 V level, 24 V peak swing).
#[test]
fn issue_14_a_high_voltage_switching_node_carries_the_caution() {
    let with_bus = |high: &str| {
        parse(&format!(
            "name: phase node
chain:
  - difference_amp: {{r1: 100k ±0.1 %, r2: 5k ±0.1 %, r3: 100k ±0.1 %, r4: 5k ±0.1 %}}
switching:
  - name: phase node
    low: 0 V
    high: {high}
    frequency: 20 kHz
    duty: 50 %
    rise_time: 20 ns
    fall_time: 20 ns
    harmonics_to: 100 MHz
"
        ))
    };
    let report = judge(&with_bus("400 V")).unwrap();
    assert!(
        report
            .cautions
            .iter()
            .any(|c| c.contains("switches between 0 V and 400 V")),
        "{:?}",
        report.cautions
    );
    assert!(judge(&with_bus("48 V")).unwrap().cautions.is_empty());
    // Every report with a switching source says what its model leaves out.
    assert!(report
        .remarks
        .iter()
        .any(|r| r.contains("slew-rate limiting")));
}

/// `compare` puts switching sources side by side with their residue,
/// settling times and margins, as each verdict judges them.
#[test]
fn issue_14_compare_shows_switching_sources() {
    let out = cmrr()
        .args([
            "compare",
            "budgets/motor-shunt.yaml",
            "budgets/load-cell-scale.yaml",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let row = &json["switching_rows"][0];
    assert_eq!(row["source"], "ground shift at each PWM edge");
    assert_eq!(row["designs"][0]["measure"], "peak after blanking");
    assert!(row["designs"][1].is_null());
}

/// A single edge (issue 14, item 1): the step of given dV/dt through one
/// RC mismatch against the same closed form as the periodic case. The
/// edge is judged as the rising edge of a slow square wave whose period
/// is doubled until the residue is flat before the next edge (what is left
/// of the earlier edges then is below 0.1 % of the peak), so the residue
/// over the window must match the single-edge response to that.
#[test]
fn issue_14_a_single_edge_matches_the_step_response() {
    let budget = rc_pair(
        0.02,
        "  - name: one edge
    low: 0 V
    high: 10 V
    slew_rate: 100 V/us
    single_edge: true
    max_error: 1 mV",
    );
    let source = &budget.switching[0];
    assert!(source.single_edge);
    // 10 V at 100 V/µs: a 100 ns edge.
    assert!((source.waveform.rise_s - 100e-9).abs() < 1e-18);
    let (report, judged) = judge_in_full(&budget, Operating::Reference).unwrap();
    let result = &report.switching[0];
    assert!(result.single_edge);
    assert_eq!(result.flat_by_window_end, Some(true));
    let samples = &judged[0].waveforms[0].nominal;
    let step = result.time_step_s;
    let mut largest: f64 = 0.0;
    let mut worst: f64 = 0.0;
    for (i, value) in samples.iter().enumerate() {
        let t = i as f64 * step;
        let exact =
            10.0 * (ramp_response(t, 1.02e-6, 1.0, 100e-9) - ramp_response(t, 1e-6, 1.0, 100e-9));
        largest = largest.max(exact.abs());
        worst = worst.max((value - exact).abs());
    }
    assert!(
        worst <= 2e-3 * largest,
        "{worst:e} against a peak of {largest:e}"
    );
    // The window covers the settling, and the settling time is after the
    // residue's peak (near one time constant).
    let settling = result.reference.settling.as_ref().unwrap();
    assert!(settling.after_falling_s.is_none());
    let t = settling.after_rising_s.nominal.unwrap();
    assert!(t > 1e-6 && t < 0.5 / result.frequency_hz, "{t}");
}

#[test]
fn issue_14_a_single_edge_refuses_periodic_fields_and_two_durations() {
    let refused = |fields: &str| {
        let text = format!(
            "name: x
chain:
  - difference_amp: {{r1: 1k ±0.1 %, r2: 20k ±0.1 %, r3: 1k ±0.1 %, r4: 20k ±0.1 %}}
switching:
  - name: edge
    low: 0 V
    high: 48 V
{fields}"
        );
        parse_budget(&text, "inline.yaml").unwrap_err().to_string()
    };
    let both = refused("    single_edge: true\n    rise_time: 10 ns\n    slew_rate: 1 V/ns\n");
    assert!(both.contains("both `rise_time` and `slew_rate`"), "{both}");
    let periodic = refused("    single_edge: true\n    rise_time: 10 ns\n    frequency: 20 kHz\n");
    assert!(
        periodic.contains("a single edge has no switching frequency"),
        "{periodic}"
    );
    let none = refused("    frequency: 20 kHz\n    duty: 50 %\n");
    assert!(none.contains("the rising edge has no duration"), "{none}");
}

/// A limit as a share of the reading (issue 14: "a limit in volts, % of
/// full scale or of the shunt's reading"): 2 % of a 10 mV reading is a
/// 200 µV band, whatever the full scale.
#[test]
fn issue_14_a_limit_can_be_a_share_of_the_reading() {
    let budget = rc_pair(
        0.02,
        "  - name: edge
    low: 0 V
    high: 1 V
    frequency: 10 kHz
    duty: 50 %
    rise_time: 100 ns
    fall_time: 100 ns
    max_error: 2 %
    reading: 10 mV",
    );
    let report = judge(&budget).unwrap();
    let s = &report.switching[0];
    let band = s.reference.settling.as_ref().unwrap().band_rti_v;
    assert!((band - 200e-6).abs() < 1e-15, "{band}");
    let check = &s.requirement.as_ref().unwrap().checks[0];
    assert!(
        check.limit.contains("of the 10.0 mV reading"),
        "{}",
        check.limit
    );
}

/// The rms corner of a matched chain: its nominal residue is zero, so the
/// corner cannot follow it; taken largest part first, each at the end that
/// adds most power, the exact corner comes near the linear bound (the two
/// filter capacitors at opposite ends), not to a tenth of it (both at the
/// same end, where they cancel).
#[test]
fn issue_14_the_rms_corner_of_a_matched_chain_does_not_cancel() {
    let path =
        std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("budgets/motor-shunt.yaml");
    let text = std::fs::read_to_string(path)
        .unwrap()
        .replace("    blanking: 5 us", "    max_error: 300 uV rms #");
    let report = judge(&parse(&text)).unwrap();
    let rms = &report.switching[0].reference.rms_rti_v;
    assert_eq!(rms.nominal, 0.0);
    assert!(rms.worst_corner > 0.8 * rms.worst_case, "{rms:?}");
}
