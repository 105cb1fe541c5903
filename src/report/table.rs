//! The terminal report: per interference source, a contribution table and
//! a totals table, then the requirement and the verdict.

use super::layout::styled;
use super::{
    BridgeRipple, ContributionRow, Corner, FilteredError, FrequencyResult, JudgedFigure, Report,
    RequirementOutcome, SourceResult, Status, TaredError, TemperatureResult, Totals,
};
use crate::model::{describe_volts, Judgement};
use crate::quantity::{format_db, format_fraction, format_si, AmplitudeForm};
use crate::verdict::TOTALS;
use tabled::builder::Builder;

/// The report as text for a terminal.
pub fn render_table(report: &Report) -> String {
    let mut out = String::new();
    out.push_str(&format!("CMRR budget: {}\n", report.budget));
    for caution in &report.cautions {
        out.push_str(&format!("\n{caution}\n"));
    }
    for finding in &report.headroom {
        out.push_str(&format!("\n{}\n", headroom_warning(finding)));
    }
    for remark in &report.remarks {
        out.push_str(&format!("note: {remark}\n"));
    }
    for fact in &report.facts {
        out.push_str(&format!("{fact}\n"));
    }
    let unit = report.measurand_unit.as_deref();
    for result in &report.results {
        out.push('\n');
        out.push_str(&source_section(result, unit));
    }
    for frequency in &report.frequencies {
        out.push('\n');
        out.push_str(&frequency_section(frequency));
    }
    for source in &report.switching {
        out.push('\n');
        out.push_str(&super::switching::switching_section(source));
    }
    out.push('\n');
    out.push_str(&verdict_line(report));
    out
}

fn source_section(result: &SourceResult, measurand_unit: Option<&str>) -> String {
    let form = result.amplitude_form;
    let mut out = format!(
        "{}: {} common mode at {}\n",
        result.source,
        describe_volts(result.amplitude_v, form),
        frequency_text(result.frequency_hz),
    );
    out.push_str(&gain_line(result.differential_gain));
    out.push_str(&contribution_table(&result.contributions, form));
    out.push('\n');
    let mut totals = Builder::default();
    let mut header = vec!["total", "CMRR", "error RTI", "error RTO"];
    if result.error_fs_ppm.is_some() {
        header.push("peak error of full scale");
    }
    if result.error_lsb.is_some() {
        header.push("error (codes)");
    }
    if result.error_measurand.is_some() {
        header.push("error (measurand)");
    }
    totals.push_record(header);
    let suffix = form.map_or(String::new(), |f| format!(" {}", f.suffix()));
    for judgement in TOTALS {
        let mut row = vec![
            judgement.label().to_string(),
            format_db(result.cmrr_db.judged(judgement).0),
            describe_volts(result.error_rti_v.judged(judgement), form),
            describe_volts(result.error_rto_v.judged(judgement), form),
        ];
        if let Some(ppm) = &result.error_fs_ppm {
            row.push(format_fraction(ppm.judged(judgement) * 1e-6));
        }
        row.extend(reading_cells(
            (result.error_lsb.as_ref(), result.error_measurand.as_ref()),
            judgement,
            &suffix,
            measurand_unit,
        ));
        totals.push_record(row);
    }
    let mut filtered = result
        .through_bridge
        .as_ref()
        .map(|r| bridge_block(r, form, measurand_unit))
        .unwrap_or_default();
    if let Some(f) = &result.after_filter {
        filtered.push_str(&filter_block(f, form, measurand_unit));
    }
    let tared = result
        .after_tare
        .as_ref()
        .map(|t| tare_block(t, measurand_unit))
        .unwrap_or_default();
    out.push_str(&section_end(
        (totals, &filtered),
        &result.corner,
        result.at_temperature.as_ref(),
        form,
        (&tared, &result.judged, result.requirement.as_ref()),
    ));
    out
}

/// Where in its band a source's filter rejection was taken.
fn band_text(filtered: &FilteredError) -> String {
    let [lo, hi] = filtered.band_hz;
    let centre = (lo + hi) / 2.0;
    if hi <= lo {
        return format!("at {}", format_si(centre, "Hz"));
    }
    let drift = format_fraction((hi - lo) / (hi + lo));
    let place = if filtered.worst_at_hz == lo {
        "its low end".to_string()
    } else if filtered.worst_at_hz == hi {
        "its high end".to_string()
    } else {
        format!(
            "{:+.3} % from its centre",
            (filtered.worst_at_hz / centre - 1.0) * 100.0
        )
    };
    format!(
        "(the worst over {} ±{drift}, at {place})",
        format_si(centre, "Hz")
    )
}

/// The error in the reading after the converter's digital filter.
fn filter_block(
    filtered: &FilteredError,
    form: Option<AmplitudeForm>,
    measurand_unit: Option<&str>,
) -> String {
    let mut out = format!(
        "after the digital filter ({}): rejection {} {}\n",
        filtered.filter,
        format_db(filtered.rejection_db.0),
        band_text(filtered),
    );
    out.push_str(&reading_table(
        ("error", "error RTI as read"),
        &ReadingFigures {
            rti: &filtered.error_rti_v,
            fs_ppm: None,
            lsb: filtered.error_lsb.as_ref(),
            measurand: filtered.error_measurand.as_ref(),
        },
        form,
        measurand_unit,
    ));
    out.push('\n');
    out
}

/// A ripple on the excitation through the bridge: the differential part,
/// what the reference leaves of it, and the error in the reading.
fn bridge_block(
    ripple: &BridgeRipple,
    form: Option<AmplitudeForm>,
    measurand_unit: Option<&str>,
) -> String {
    let volts = |v: f64| describe_volts(v, form);
    let mut out = format!(
        "through the bridge: {} of ripple on the excitation ({} across the bridge) passes on {} differentially at capacity\n",
        volts(ripple.ripple_v),
        volts(ripple.across_bridge_v),
        volts(ripple.differential_v),
    );
    out.push_str(&match ripple.cancellation_db {
        Some(db) => format!(
            "  reference {}: the reading keeps {} RTI of it (cancelled by {})\n",
            ripple.reference,
            volts(ripple.left_rti_v),
            format_db(db.0)
        ),
        None => format!(
            "  reference {}: the reading keeps all of it, {} RTI\n",
            ripple.reference,
            volts(ripple.left_rti_v)
        ),
    });
    out.push_str("error in the reading (the common mode's and the bridge's, magnitudes added):\n");
    out.push_str(&reading_table(
        ("error", "error RTI"),
        &ReadingFigures {
            rti: &ripple.error_rti_v,
            fs_ppm: None,
            lsb: ripple.error_lsb.as_ref(),
            measurand: ripple.error_measurand.as_ref(),
        },
        form,
        measurand_unit,
    ));
    out.push('\n');
    out
}

/// What a tare leaves of a DC source's offset: where it was calibrated,
/// its contributors and its totals.
fn tare_block(tared: &TaredError, measurand_unit: Option<&str>) -> String {
    let calibrated = tared.calibrated_at_k.map_or_else(
        || "at the one temperature the budget states".to_string(),
        |k| format!("at {}", celsius(k)),
    );
    let worst = match tared.temperature_k {
        Some(k) => format!("worst at {}", celsius(k)),
        None => "worst at the calibration's own temperature".to_string(),
    };
    let mut out = format!(
        "after tare (zeroed {calibrated}; the common mode may move by {} since): residual {worst}\n",
        format_si(tared.varies_by_v, "V"),
    );
    if tared.contributions.is_empty() {
        out.push_str("nothing is left: no part drifts and the common mode does not move\n");
    } else {
        out.push_str(&contribution_table(&tared.contributions, None));
        out.push('\n');
    }
    out.push_str(&reading_table(
        ("residual", "residual RTI"),
        &ReadingFigures {
            rti: &tared.residual_rti_v,
            fs_ppm: tared.residual_fs_ppm.as_ref(),
            lsb: tared.residual_lsb.as_ref(),
            measurand: tared.residual_measurand.as_ref(),
        },
        None,
        measurand_unit,
    ));
    out.push_str(&format!(
        "\n  (worst corner: a directed search, {} corners solved at both temperatures)\n",
        tared.corners_solved
    ));
    out
}

/// The figures of one reading table: the error referred to the input and,
/// where given, its share of full scale, codes and measurand units (each
/// the four totals).
struct ReadingFigures<'a> {
    rti: &'a Totals<f64>,
    fs_ppm: Option<&'a Totals<f64>>,
    lsb: Option<&'a Totals<f64>>,
    measurand: Option<&'a Totals<f64>>,
}

/// A totals table of an error as read: `word` names it (`error`,
/// `residual`), `rti_heading` its first column's heading.
fn reading_table(
    (word, rti_heading): (&str, &str),
    figures: &ReadingFigures,
    form: Option<AmplitudeForm>,
    measurand_unit: Option<&str>,
) -> String {
    let mut table = Builder::default();
    let mut header = vec!["total".to_string(), rti_heading.to_string()];
    if figures.fs_ppm.is_some() {
        header.push(format!("{word} of full scale"));
    }
    if figures.lsb.is_some() {
        header.push(format!("{word} (codes)"));
    }
    if figures.measurand.is_some() {
        header.push(format!("{word} (measurand)"));
    }
    table.push_record(header);
    let suffix = form.map_or(String::new(), |f| format!(" {}", f.suffix()));
    for judgement in TOTALS {
        let mut row = vec![
            judgement.label().to_string(),
            describe_volts(figures.rti.judged(judgement), form),
        ];
        if let Some(ppm) = figures.fs_ppm {
            row.push(format_fraction(ppm.judged(judgement) * 1e-6));
        }
        row.extend(reading_cells(
            (figures.lsb, figures.measurand),
            judgement,
            &suffix,
            measurand_unit,
        ));
        table.push_record(row);
    }
    styled(table, 1..usize::MAX)
}

/// The error in codes and in the measurand's unit, each where given, for
/// one total (`suffix` is the source's form, e.g. ` rms`).
fn reading_cells(
    (lsb, measurand): (Option<&Totals<f64>>, Option<&Totals<f64>>),
    judgement: Judgement,
    suffix: &str,
    measurand_unit: Option<&str>,
) -> Vec<String> {
    let unit = measurand_unit.unwrap_or("");
    let mut cells = Vec::new();
    if let Some(lsb) = lsb {
        cells.push(format!(
            "{} LSB{suffix}",
            plain_number(lsb.judged(judgement))
        ));
    }
    if let Some(error) = measurand {
        cells.push(format!(
            "{} {unit}{suffix}",
            plain_number(error.judged(judgement))
        ));
    }
    cells
}

/// A number with three significant digits, in plain or scientific form.
fn plain_number(value: f64) -> String {
    crate::quantity::format_plain(value)
}

/// A temperature in degrees Celsius.
pub(crate) fn celsius(kelvin: f64) -> String {
    format!("{:.1} °C", kelvin - 273.15)
}

/// The worse end of the temperature range: its totals and its largest
/// contributors.
fn temperature_lines(result: &TemperatureResult, form: Option<AmplitudeForm>) -> String {
    let mut out = format!(
        "at {} (the worse end of the temperature range): CMRR worst case {}, worst corner {}, RSS {}",
        celsius(result.temperature_k),
        format_db(result.cmrr_db.worst_case.0),
        format_db(result.cmrr_db.worst_corner.0),
        format_db(result.cmrr_db.rss.0),
    );
    if let Some(error) = &result.error_rti_v {
        out.push_str(&format!(
            "; error RTI worst case {}",
            describe_volts(error.worst_case, form)
        ));
    }
    out.push('\n');
    let drift: Vec<&ContributionRow> = result
        .contributions
        .iter()
        .filter(|row| row.name.ends_with(" TC") || row.name.contains("TC ("))
        .take(TEMPERATURE_ROWS)
        .collect();
    if !drift.is_empty() {
        let list: Vec<String> = drift
            .iter()
            .map(|row| format!("{} ({}, {})", row.name, row.stage, format_db(row.cmrr_db.0)))
            .collect();
        out.push_str(&format!(
            "  largest drift contributors: {}\n",
            list.join("; ")
        ));
    }
    out
}

/// How many drift contributors the temperature line names.
const TEMPERATURE_ROWS: usize = 4;

fn frequency_section(result: &FrequencyResult) -> String {
    let mut out = format!(
        "at {} (no interference source here)\n",
        frequency_text(result.frequency_hz)
    );
    out.push_str(&gain_line(result.differential_gain));
    out.push_str(&contribution_table(&result.contributions, None));
    out.push('\n');
    let mut totals = Builder::default();
    totals.push_record(["total", "CMRR"]);
    for judgement in TOTALS {
        totals.push_record([
            judgement.label().to_string(),
            format_db(result.cmrr_db.judged(judgement).0),
        ]);
    }
    out.push_str(&section_end(
        (totals, ""),
        &result.corner,
        result.at_temperature.as_ref(),
        None,
        ("", &result.judged, result.requirement.as_ref()),
    ));
    out
}

fn frequency_text(freq_hz: f64) -> String {
    if freq_hz == 0.0 {
        "DC (0 Hz)".to_string()
    } else {
        format_si(freq_hz, "Hz")
    }
}

fn gain_line(gain: f64) -> String {
    format!(
        "chain differential gain {} ({})\n",
        format_si(gain, "V/V"),
        format_db(20.0 * gain.log10())
    )
}

fn contribution_table(rows: &[ContributionRow], form: Option<AmplitudeForm>) -> String {
    let mut table = Builder::default();
    let with_error = rows.iter().any(|r| r.error_rti_v.is_some());
    let mut header = vec!["contributor", "stage", "value", "CMRR alone"];
    if with_error {
        header.push("error RTI");
    }
    header.push("share of worst case");
    table.push_record(header);
    for row in rows {
        let mut record = vec![
            row.name.clone(),
            row.stage.clone(),
            row.value.clone(),
            format_db(row.cmrr_db.0),
        ];
        if with_error {
            record.push(
                row.error_rti_v
                    .map(|e| describe_volts(e, form))
                    .unwrap_or_default(),
            );
        }
        record.push(format!("{:.1} %", row.share * 100.0));
        table.push_record(record);
    }
    if rows.is_empty() {
        return "no contributor varies: every part is taken as exact\n".to_string();
    }
    styled(table, 3..usize::MAX)
}

/// The end of a section: the totals table and what follows it (`after`,
/// e.g. the error after a digital filter), the worst corner, the worse end
/// of the temperature range, what is judged instead of the totals (`judged
/// instead`, e.g. what a tare leaves) and the requirement's outcome.
fn section_end(
    (totals, after): (Builder, &str),
    corner: &Corner,
    at_temperature: Option<&TemperatureResult>,
    form: Option<AmplitudeForm>,
    (judged_instead, judged, requirement): (&str, &JudgedFigure, Option<&RequirementOutcome>),
) -> String {
    let mut out = styled(totals, 1..usize::MAX);
    out.push('\n');
    out.push_str(after);
    out.push_str(&corner_lines(corner));
    if let Some(result) = at_temperature {
        out.push_str(&temperature_lines(result, form));
    }
    out.push_str(judged_instead);
    if let Some(outcome) = requirement {
        out.push_str(&requirement_lines(outcome, judged));
    }
    out
}

fn corner_lines(corner: &Corner) -> String {
    let mut out = format!(
        "worst corner ({} search, {} corners solved): CMRR {} against the linear bound's {}; interaction {:.2} % of the worst case\n",
        corner.search,
        corner.corners_solved,
        format_db(corner.cmrr_db.0),
        format_db(corner.linear_bound_db.0),
        corner.interaction_share * 100.0
    );
    if let Some(why) = &corner.why_they_differ {
        out.push_str(&format!("  {why}\n"));
    }
    out
}

/// Where a judged figure sits.
pub(crate) fn judged_at(judged: &JudgedFigure) -> String {
    match judged.temperature_k {
        Some(k) => format!("at {}", celsius(k)),
        None => "at the reference temperature".to_string(),
    }
}

fn requirement_lines(outcome: &RequirementOutcome, judged: &JudgedFigure) -> String {
    let mut out = format!(
        "requirement (judged on {}, {}: CMRR {}): {}, margin {}\n",
        outcome.judged_on.label(),
        judged_at(judged),
        format_db(judged.cmrr_db.0),
        if outcome.met { "met" } else { "MISSED" },
        format_db(outcome.margin_db.0)
    );
    out.push_str(&check_lines(outcome));
    out
}

/// Each check of an outcome on its own indented line, with whether it is
/// met and by how much.
pub(crate) fn check_lines(outcome: &RequirementOutcome) -> String {
    outcome
        .checks
        .iter()
        .map(|check| {
            format!(
                "  {}: {} ({} by {})\n",
                check.limit,
                check.achieved,
                if check.met { "met" } else { "MISSED" },
                format_db(check.margin_db.0.abs())
            )
        })
        .collect()
}

/// The verdict in one line, as every command prints it.
pub fn verdict_line(report: &Report) -> String {
    verdict_sentence(&report.verdict, report.headroom.len())
}

/// The verdict in one line, from the verdict and how many headroom
/// findings there are.
pub fn verdict_sentence(verdict: &super::Verdict, headroom_findings: usize) -> String {
    let at = verdict
        .tightest
        .as_deref()
        .map_or(String::new(), |t| format!(" ({t})"));
    match (verdict.status, verdict.margin_db) {
        (Status::DoesNotHold, _) => format!(
            "verdict: DOES NOT HOLD: {} node(s) leave their range (see the headroom warnings), so the small-signal figures do not apply{}\n",
            headroom_findings,
            verdict.margin_db.map_or(String::new(), |m| format!("; the smallest margin would be {}{at}", format_db(m.0)))
        ),
        (Status::Met, Some(margin)) => format!(
            "verdict: requirement met; smallest margin {}{at}\n",
            format_db(margin.0)
        ),
        (Status::Missed, Some(margin)) => format!(
            "verdict: requirement MISSED; worst shortfall {}{at}\n",
            format_db(-margin.0)
        ),
        _ => "verdict: no requirement stated\n".to_string(),
    }
}

/// A headroom finding as a warning line.
pub fn headroom_warning(finding: &crate::engine::HeadroomFinding) -> String {
    let allowed = match finding.allowed_high_v {
        Some(high) => format!(
            "{} to {}",
            format_si(finding.allowed_low_v, "V"),
            format_si(high, "V")
        ),
        None => format!("at least {}", format_si(finding.allowed_low_v, "V")),
    };
    format!(
        "WARNING (headroom): {}, {} spans {} to {}, outside its range ({allowed}); the CMRR figures assume linear operation and do not hold",
        finding.stage,
        finding.node,
        format_si(finding.low_v, "V"),
        format_si(finding.high_v, "V"),
    )
}
