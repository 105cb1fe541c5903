//! Switching sources in the budget report: per source, what switches, how
//! the residue was summed, its contributors, its totals (peak, rms, the
//! judged measure, settling after each edge) and its check; and the same
//! as CSV rows.

use super::csv::{number, push_line};
use super::layout::styled;
use super::table::celsius;
use crate::quantity::{format_db, format_fraction, format_si};
use crate::verdict::{ResidueFigures, Settling, SwitchingResult, Totals, TOTALS};
use tabled::builder::Builder;

/// What switches, in one line.
pub fn waveform_line(result: &SwitchingResult) -> String {
    if result.single_edge {
        let step = result.high_v - result.low_v;
        return format!(
            "{}: common mode steps once from {} to {}, edge {} ({})\n",
            result.source,
            format_si(result.low_v, "V"),
            format_si(result.high_v, "V"),
            format_si(result.rise_time_s, "s"),
            format_si(step.abs() / result.rise_time_s, "V/s"),
        );
    }
    format!(
        "{}: common mode switching {} to {} at {}, duty {}, rising edge {}, falling edge {}\n",
        result.source,
        format_si(result.low_v, "V"),
        format_si(result.high_v, "V"),
        format_si(result.frequency_hz, "Hz"),
        format_fraction(result.duty),
        format_si(result.rise_time_s, "s"),
        format_si(result.fall_time_s, "s"),
    )
}

/// How the residue was formed, in one line.
pub fn method_line(result: &SwitchingResult) -> String {
    if result.single_edge {
        let period = 1.0 / result.frequency_hz;
        let mut line = format!(
            "residue over the {} after the edge (the rising edge of a square wave of period {}, {}), {} harmonics up to {}, sampled every {}, referred to the input through the chain's DC gain of {}\n",
            format_si(period / 2.0, "s"),
            format_si(period, "s"),
            if result.flat_by_window_end == Some(true) {
                "slow enough that the residue is flat to 0.1 % of its peak before the next edge"
            } else {
                "the longest tried: the residue is STILL MOVING at the end of the window, so what follows is what it has reached by then"
            },
            result.harmonics,
            format_si(result.harmonics_to_hz, "Hz"),
            format_si(result.time_step_s, "s"),
            format_si(result.differential_gain, "V/V"),
        );
        if result.harmonics_to_hz < 1.0 / result.rise_time_s {
            line.push_str("  the harmonics summed stop below one over the edge: the edge itself is smoothed, and the truncation bound below says by how much it could matter\n");
        }
        return line;
    }
    format!(
        "residue over {} harmonics up to {}{}, sampled every {}, referred to the input through the chain's DC gain of {}\n",
        result.harmonics,
        format_si(result.harmonics_to_hz, "Hz"),
        if result.harmonics_to_stated { "" } else { " (ten over the shorter edge)" },
        format_si(result.time_step_s, "s"),
        format_si(result.differential_gain, "V/V"),
    )
}

/// A settling time, or that it does not settle before the next edge.
pub fn settling_text(time: Option<f64>) -> String {
    match time {
        Some(0.0) => "never outside".to_string(),
        Some(t) => format_si(t, "s"),
        None => "does not settle".to_string(),
    }
}

/// The judged total's settling after the rising and the falling edge,
/// `a / b`, or after the one edge of a single edge.
pub fn settling_pair(settling: &Settling, judgement: crate::model::Judgement) -> String {
    let rising = settling_text(settling.after_rising_s.judged(judgement));
    match &settling.after_falling_s {
        Some(falling) => format!("{rising} / {}", settling_text(falling.judged(judgement))),
        None => rising,
    }
}

/// The switching source's section of the terminal report.
pub fn switching_section(result: &SwitchingResult) -> String {
    let mut out = waveform_line(result);
    out.push_str(&method_line(result));
    let figures = &result.reference;
    let measure = result.measure;
    let mut table = Builder::default();
    let judged_header = format!("residue RTI ({measure})");
    table.push_record([
        "contributor",
        "stage",
        "value",
        judged_header.as_str(),
        "share of the sum",
    ]);
    for row in &figures.contributions {
        table.push_record([
            row.name.clone(),
            row.stage.clone(),
            row.value.clone(),
            format_si(row.residue_rti_v, "V"),
            format!("{:.1} %", row.share * 100.0),
        ]);
    }
    if figures.contributions.is_empty() {
        out.push_str("no contributor varies: every part is taken as exact\n");
    } else {
        out.push_str(&styled(table, 3..usize::MAX));
        out.push('\n');
    }
    out.push_str(&totals_table(result, figures));
    out.push_str(&format!(
        "worst corner: each varying part at the end the linear model puts worst for the {measure}, solved exactly\n"
    ));
    if let Some(why) = &figures.corner_exceeds_bound {
        out.push_str(&format!("  {why}\n"));
    }
    out.push_str(&format!(
        "harmonics above {} add at most {} RTI (if the conversion rises no higher above it than in the octave below)\n",
        format_si(result.harmonics_to_hz, "Hz"),
        format_si(figures.truncation_rti_v, "V")
    ));
    if let Some(end) = &result.at_temperature {
        out.push_str(&temperature_line(result, end));
    }
    if let Some(outcome) = &result.requirement {
        let at = match result.judged_temperature_k {
            Some(k) => format!("at {}", celsius(k)),
            None => "at the reference temperature".to_string(),
        };
        out.push_str(&format!(
            "requirement (judged on {}, {at}: {} {}): {}, margin {}\n",
            outcome.judged_on.label(),
            measure,
            format_si(result.judged_rti_v, "V"),
            if outcome.met { "met" } else { "MISSED" },
            format_db(outcome.margin_db.0)
        ));
        out.push_str(&super::table::check_lines(outcome));
    }
    out
}

fn totals_table(result: &SwitchingResult, figures: &ResidueFigures) -> String {
    let mut table = Builder::default();
    let mut header = vec!["total".to_string(), "peak RTI".to_string()];
    if !result.single_edge {
        header.push("rms RTI".into());
    }
    header.push("peak RTO".into());
    let judged_extra = result.blanking_s.is_some() || result.sample.is_some();
    if judged_extra {
        header.push(format!("{} RTI", result.measure));
    }
    if let Some(s) = &figures.settling {
        if result.single_edge {
            header.push("settles after the edge".into());
        } else {
            header.push("settles after rising edge".into());
        }
        if s.after_falling_s.is_some() {
            header.push("after falling edge".into());
        }
    }
    table.push_record(header);
    for judgement in TOTALS {
        let pick = |t: &Totals<f64>| t.judged(judgement);
        let mut row = vec![
            judgement.label().to_string(),
            format_si(pick(&figures.peak_rti_v), "V"),
        ];
        if !result.single_edge {
            row.push(format_si(pick(&figures.rms_rti_v), "V"));
        }
        row.push(format_si(
            pick(&figures.peak_rti_v) * result.differential_gain,
            "V",
        ));
        if judged_extra {
            row.push(format_si(pick(&figures.judged_rti_v), "V"));
        }
        if let Some(s) = &figures.settling {
            row.push(settling_text(s.after_rising_s.judged(judgement)));
            if let Some(falling) = &s.after_falling_s {
                row.push(settling_text(falling.judged(judgement)));
            }
        }
        table.push_record(row);
    }
    let mut out = styled(table, 1..usize::MAX);
    out.push('\n');
    if let Some(s) = &figures.settling {
        out.push_str(&band_line(s));
    }
    out
}

fn band_line(settling: &Settling) -> String {
    format!(
        "settling: from the start of each edge until the residue stays within ±{} RTI (the allowed error) up to the next edge\n",
        format_si(settling.band_rti_v, "V")
    )
}

fn temperature_line(result: &SwitchingResult, end: &ResidueFigures) -> String {
    let kelvin = end.temperature_k.unwrap_or(f64::NAN);
    let mut out = format!(
        "at {} (the worse end of the temperature range): {} worst case {}, worst corner {}",
        celsius(kelvin),
        result.measure,
        format_si(end.judged_rti_v.worst_case, "V"),
        format_si(end.judged_rti_v.worst_corner, "V"),
    );
    if let Some(s) = &end.settling {
        out.push_str(&format!(
            "; settles ({}) {}",
            result.judged_on.label(),
            settling_pair(s, result.judged_on)
        ));
    }
    out.push('\n');
    out
}

/// The switching sources' rows of the budget CSV: the lead columns carry
/// the source, its switching frequency, its step and the form
/// `switching`; the error columns the judged measure of the residue.
pub fn switching_csv_rows(out: &mut String, result: &SwitchingResult) {
    let lead = [
        result.source.clone(),
        number(result.frequency_hz),
        number(result.high_v - result.low_v),
        "switching".to_string(),
    ];
    let gain = result.differential_gain;
    let figures = &result.reference;
    let mut push = |fields: [String; 9]| push_line(out, &lead, &fields);
    for row in &figures.contributions {
        let kind = if row.name == "nominal imbalance" {
            "systematic"
        } else {
            "random"
        };
        push([
            "contribution".into(),
            row.name.clone(),
            row.stage.clone(),
            row.value.clone(),
            kind.into(),
            String::new(),
            number(row.residue_rti_v),
            number(row.residue_rti_v * gain),
            number(row.share),
        ]);
    }
    for judgement in TOTALS {
        let e = figures.judged_rti_v.judged(judgement);
        let name = match judgement {
            crate::model::Judgement::Rss => "rss",
            other => other.label(),
        };
        push([
            "total".into(),
            name.into(),
            String::new(),
            String::new(),
            String::new(),
            String::new(),
            number(e),
            number(e * gain),
            String::new(),
        ]);
    }
}
