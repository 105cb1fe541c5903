//! The CSV report: one row per contributor and per total, for every
//! interference source and every further frequency. Units are in the
//! headers; an infinite CMRR is written `inf`.

use super::{BridgeRipple, ContributionRow, Db, FilteredError, Report, TaredError, Totals};

const HEADER: &str = "source,frequency_hz,amplitude_v,amplitude_form,row,contributor,stage,value,kind,cmrr_db,error_rti_v,error_rto_v,share";

/// The report as CSV, header first.
pub fn render_csv(report: &Report) -> String {
    let mut out = String::from(HEADER);
    out.push('\n');
    for result in &report.results {
        let lead = [
            result.source.clone(),
            number(result.frequency_hz),
            number(result.amplitude_v),
            result
                .amplitude_form
                .map_or_else(|| "dc".to_string(), |f| f.name().to_string()),
        ];
        write_rows(
            &mut out,
            &lead,
            &result.contributions,
            &result.cmrr_db,
            Some((&result.error_rti_v, &result.error_rto_v)),
            result.differential_gain,
        );
        if let Some(ripple) = &result.through_bridge {
            bridge_rows(&mut out, &lead, ripple, result.differential_gain);
        }
        if let Some(filtered) = &result.after_filter {
            filter_rows(
                &mut out,
                &lead,
                filtered,
                &result.cmrr_db,
                result.differential_gain,
            );
        }
        if let Some(tared) = &result.after_tare {
            tare_rows(
                &mut out,
                &lead,
                tared,
                (result.amplitude_v, result.differential_gain),
            );
        }
    }
    for frequency in &report.frequencies {
        let lead = [
            String::new(),
            number(frequency.frequency_hz),
            String::new(),
            String::new(),
        ];
        write_rows(
            &mut out,
            &lead,
            &frequency.contributions,
            &frequency.cmrr_db,
            None,
            frequency.differential_gain,
        );
    }
    for source in &report.switching {
        super::switching::switching_csv_rows(&mut out, source);
    }
    out
}

fn write_rows(
    out: &mut String,
    lead: &[String; 4],
    contributions: &[ContributionRow],
    cmrr: &Totals<Db>,
    errors: Option<(&Totals<f64>, &Totals<f64>)>,
    gain: f64,
) {
    for row in contributions {
        let rto = row.error_rti_v.map(|e| e * gain);
        let fields = [
            "contribution".to_string(),
            row.name.clone(),
            row.stage.clone(),
            row.value.clone(),
            row.kind.name().to_string(),
            db(row.cmrr_db),
            row.error_rti_v.map(number).unwrap_or_default(),
            rto.map(number).unwrap_or_default(),
            number(row.share),
        ];
        push_line(out, lead, &fields);
    }
    let totals = [
        (
            "worst case",
            cmrr.worst_case,
            errors.map(|(rti, rto)| (rti.worst_case, rto.worst_case)),
        ),
        (
            "worst corner",
            cmrr.worst_corner,
            errors.map(|(rti, rto)| (rti.worst_corner, rto.worst_corner)),
        ),
        ("rss", cmrr.rss, errors.map(|(rti, rto)| (rti.rss, rto.rss))),
        (
            "nominal",
            cmrr.nominal,
            errors.map(|(rti, rto)| (rti.nominal, rto.nominal)),
        ),
    ];
    for (name, cmrr_db, error) in totals {
        let fields = [
            "total".to_string(),
            name.to_string(),
            String::new(),
            String::new(),
            String::new(),
            db(cmrr_db),
            error.map(|e| number(e.0)).unwrap_or_default(),
            error.map(|e| number(e.1)).unwrap_or_default(),
            String::new(),
        ];
        push_line(out, lead, &fields);
    }
}

/// The totals after the converter's digital filter: `row` is
/// `after filter`, `value` the filter, `cmrr_db` the rejection as read
/// (the chain's CMRR plus the filter's rejection), the errors in the
/// reading.
fn filter_rows(
    out: &mut String,
    lead: &[String; 4],
    filtered: &FilteredError,
    cmrr: &Totals<Db>,
    gain: f64,
) {
    for judgement in crate::verdict::TOTALS {
        let rti = filtered.error_rti_v.judged(judgement);
        let fields = [
            "after filter".to_string(),
            judgement.label().to_lowercase(),
            String::new(),
            filtered.filter.clone(),
            "digital filter".to_string(),
            db(Db(cmrr.judged(judgement).0 + filtered.rejection_db.0)),
            number(rti),
            number(rti * gain),
            String::new(),
        ];
        push_line(out, lead, &fields);
    }
}

/// A ripple through the bridge: `row` is `through bridge`; one line for
/// the differential part the reading keeps (`contributor` `bridge`, `value`
/// the reference, `cmrr_db` the ratiometric cancellation where there is
/// one), then the error in the reading per total.
fn bridge_rows(out: &mut String, lead: &[String; 4], ripple: &BridgeRipple, gain: f64) {
    let kept = [
        "through bridge".to_string(),
        "bridge".to_string(),
        String::new(),
        ripple.reference.clone(),
        "systematic".to_string(),
        ripple.cancellation_db.map(db).unwrap_or_default(),
        number(ripple.left_rti_v),
        number(ripple.left_rti_v * gain),
        String::new(),
    ];
    push_line(out, lead, &kept);
    for judgement in crate::verdict::TOTALS {
        let rti = ripple.error_rti_v.judged(judgement);
        let fields = [
            "through bridge".to_string(),
            judgement.label().to_lowercase(),
            String::new(),
            String::new(),
            String::new(),
            String::new(),
            number(rti),
            number(rti * gain),
            String::new(),
        ];
        push_line(out, lead, &fields);
    }
}

/// What a tare leaves: `row` is `after tare`, one line per contributor
/// (`contributor` named, `kind` systematic or random) and per total
/// (`contributor` the total's name, `kind` empty); `cmrr_db` is the
/// residual over the amplitude, the errors the residual.
fn tare_rows(
    out: &mut String,
    lead: &[String; 4],
    tared: &TaredError,
    (amplitude, gain): (f64, f64),
) {
    for row in &tared.contributions {
        let rti = row.error_rti_v.unwrap_or_default();
        let fields = [
            "after tare".to_string(),
            row.name.clone(),
            row.stage.clone(),
            row.value.clone(),
            row.kind.name().to_string(),
            db(row.cmrr_db),
            number(rti),
            number(rti * gain),
            number(row.share),
        ];
        push_line(out, lead, &fields);
    }
    for judgement in crate::verdict::TOTALS {
        let rti = tared.residual_rti_v.judged(judgement);
        let fields = [
            "after tare".to_string(),
            judgement.label().to_lowercase(),
            String::new(),
            String::new(),
            String::new(),
            db(Db::from_conversion(rti / amplitude)),
            number(rti),
            number(rti * gain),
            String::new(),
        ];
        push_line(out, lead, &fields);
    }
}

/// One CSV line: the lead columns, then the fields, each escaped.
pub(crate) fn push_line(out: &mut String, lead: &[String; 4], fields: &[String; 9]) {
    let line: Vec<String> = lead
        .iter()
        .chain(fields.iter())
        .map(|f| escape(f))
        .collect();
    out.push_str(&line.join(","));
    out.push('\n');
}

pub(crate) fn number(value: f64) -> String {
    format!("{value}")
}

/// A dB figure for CSV: six decimals, `inf` for an infinite ratio.
pub(crate) fn db(value: Db) -> String {
    if value.0.is_infinite() {
        if value.0 > 0.0 {
            "inf".into()
        } else {
            "-inf".into()
        }
    } else {
        format!("{:.6}", value.0)
    }
}

/// Quote a field when it holds a comma, a quote or a line break.
pub(crate) fn escape(field: &str) -> String {
    if field.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", field.replace('"', "\"\""))
    } else {
        field.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_fields() {
        assert_eq!(escape("plain"), "plain");
        assert_eq!(escape("a, b"), "\"a, b\"");
        assert_eq!(escape("say \"hi\""), "\"say \"\"hi\"\"\"");
    }
}
