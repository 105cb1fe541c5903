//! The validated budget model.

use super::Parameters;
use crate::quantity::{format_si, AmplitudeForm, SpreadShape};
use crate::stage::Stage;

/// A validated budget, ready for the engine.
#[derive(Debug, Clone, PartialEq)]
pub struct Budget {
    /// The budget's name.
    pub name: String,
    /// Free-text notes from the file.
    pub notes: Option<String>,
    /// The stages, from the sensor to the last amplifier.
    pub chain: Vec<Stage>,
    /// Every circuit parameter of every stage.
    pub parameters: Parameters,
    /// A null trim applied to every unit, when the design is modelled as
    /// trimmed on the bench (see [`NullTrim`]); `None` as read from a file.
    pub null_trim: Option<NullTrim>,
    /// The common-mode interference sources.
    pub interference: Vec<Interference>,
    /// Periodic switching common-mode waveforms (PWM edges), analysed in
    /// time rather than as one sine.
    pub switching: Vec<Switching>,
    /// What the design must achieve, when stated.
    pub requirement: Option<Requirement>,
    /// Further frequencies (Hz) at which to report the CMRR.
    pub extra_frequencies_hz: Vec<f64>,
    /// Facts that call for safety cautions.
    pub safety: Safety,
    /// The operating temperature range, when given.
    pub temperature: Option<TemperatureRange>,
    /// The measured quantity, when given.
    pub measurand: Option<Measurand>,
    /// The converter's reference when it is taken from the bridge's
    /// excitation (a ratiometric reading); `None` for a reference of its
    /// own.
    pub ratiometric_reference: Option<RatiometricReference>,
    /// The digital filter after the converter that ends the chain, when
    /// the converter states one: it attenuates what each source leaves in
    /// the reading by its gain at the source's frequency.
    pub digital_filter: Option<super::DigitalFilter>,
    /// The file's preferred sweep range (each part optional).
    pub sweep: SweepRange,
    /// How toleranced values spread in production, by default.
    pub production: Production,
}

/// A converter reference taken from the bridge's excitation: a ripple on the
/// excitation moves the reference with the signal, and the reading, a
/// ratio, keeps only what the two paths do not share.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RatiometricReference {
    /// The reference path's single-pole corner (its filter), Hz; `None`
    /// when it is taken straight.
    pub corner_hz: Option<f64>,
}

impl RatiometricReference {
    /// The reference path's transfer at `freq_hz`, `1/(1 + j f/fc)`.
    pub fn transfer(&self, freq_hz: f64) -> num_complex::Complex64 {
        let one = num_complex::Complex64::new(1.0, 0.0);
        match self.corner_hz {
            Some(fc) => one / num_complex::Complex64::new(1.0, freq_hz / fc),
            None => one,
        }
    }

    /// Described for a report.
    pub fn describe(&self) -> String {
        match self.corner_hz {
            Some(fc) => format!(
                "taken from the excitation through a single pole at {}",
                format_si(fc, "Hz")
            ),
            None => "taken straight from the excitation".to_string(),
        }
    }
}

/// A null trim at DC: in each unit, one resistor is adjusted until the
/// common-mode output at DC is zero (at the reference temperature), which
/// cancels every DC conversion at once, the op-amps' own included; the
/// adjustment then misses the null by the trim's resolution. The engine
/// solves the adjustment for every set of values it evaluates
/// ([`crate::engine::settle`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NullTrim {
    /// The resistor adjusted (its base parameter).
    pub adjusted: super::ParamId,
    /// The relative error left after the trim, a bound of unknown sign.
    pub residual: super::ParamId,
}

/// The default spread of toleranced values in production.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Production {
    /// The shape of a toleranced value that names none.
    pub shape: SpreadShape,
    /// For normal shapes: the tolerance sits at this many standard
    /// deviations.
    pub sigmas: f64,
}

impl Default for Production {
    /// Truncated normal with the tolerance at 3 σ: parts are normal around
    /// nominal and those outside their tolerance were screened out (common
    /// practice, no source).
    fn default() -> Production {
        Production {
            shape: SpreadShape::Truncated,
            sigmas: 3.0,
        }
    }
}

/// A sweep range as the budget file states it; parts left out fall back to
/// the command's options or the defaults.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SweepRange {
    /// Lowest frequency, Hz.
    pub from_hz: Option<f64>,
    /// Highest frequency, Hz.
    pub to_hz: Option<f64>,
    /// Points per decade.
    pub per_decade: Option<u32>,
}

/// The quantity the sensor measures, to express errors in its units.
#[derive(Debug, Clone, PartialEq)]
pub struct Measurand {
    /// Its unit as the user writes it (`kg`, `K`, `A`).
    pub unit: String,
    /// Volts at the sensor's output per unit of the quantity.
    pub volts_per_unit: f64,
    /// The sensor's full-scale output in volts (a bridge's sensitivity ×
    /// excitation, or `volts_per_unit` × the stated capacity), when the
    /// measurand gives it: the requirement's full scale unless it states
    /// its own.
    pub full_scale_volts: Option<f64>,
    /// A bridge's excitation, when the measurand is a bridge: a source may
    /// take its common mode from it (`amplitude: excitation/2`) or ride on
    /// it (`excitation_ripple`).
    pub excitation: Option<BridgeExcitation>,
}

/// Where a bridge's excitation is held at its stated value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sense {
    /// At the instrument (four wires): the excitation leads' resistance
    /// takes its share, and the bridge sees less.
    Local,
    /// At the bridge, through sense leads (six wires): the bridge sees the
    /// stated excitation, and the return lead's drop lifts its low end.
    Remote,
}

/// A bridge excited from the instrument's ground through a pair of leads.
///
/// With local sense the source drives `V` into `R_b + 2 R_l`: the bridge
/// sees `V R_b/(R_b + 2 R_l)` and its low end sits at `V R_l/(R_b + 2 R_l)`.
/// With remote sense the bridge sees `V` and its low end sits at
/// `V R_l/R_b`, the bridge current's drop in the return lead. The same
/// linear map carries a ripple on the excitation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BridgeExcitation {
    /// The stated excitation, volts.
    pub volts: f64,
    /// The bridge's output at capacity per volt across it, V/V.
    pub sensitivity: f64,
    /// Each excitation lead's resistance, Ω (0 when not stated).
    pub lead_ohms: f64,
    /// The bridge's input resistance, Ω (needed with lead resistance).
    pub bridge_ohms: f64,
    /// Where the excitation is held.
    pub sense: Sense,
}

impl BridgeExcitation {
    /// The voltage across the bridge for `v` volts of excitation.
    pub fn across_bridge(&self, v: f64) -> f64 {
        match self.sense {
            Sense::Remote => v,
            Sense::Local if self.lead_ohms == 0.0 => v,
            Sense::Local => v * self.bridge_ohms / (self.bridge_ohms + 2.0 * self.lead_ohms),
        }
    }

    /// How far the bridge's low end sits above the instrument's ground for
    /// `v` volts of excitation.
    pub fn low_end(&self, v: f64) -> f64 {
        if self.lead_ohms == 0.0 {
            return 0.0;
        }
        match self.sense {
            Sense::Remote => v * self.lead_ohms / self.bridge_ohms,
            Sense::Local => v * self.lead_ohms / (self.bridge_ohms + 2.0 * self.lead_ohms),
        }
    }

    /// The voltage `share` of the way up the bridge (1/2: its outputs'
    /// common mode), above ground, for `v` volts of excitation.
    pub fn point_up_the_bridge(&self, v: f64, share: f64) -> f64 {
        self.low_end(v) + share * self.across_bridge(v)
    }

    /// The bridge's output at capacity, volts.
    pub fn full_scale_volts(&self) -> f64 {
        self.sensitivity * self.across_bridge(self.volts)
    }
}

/// The operating temperature range and the reference temperature at which
/// part values are stated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TemperatureRange {
    /// Where the values hold as written, in kelvin.
    pub reference_k: f64,
    /// The coldest operating temperature, in kelvin.
    pub low_k: f64,
    /// The hottest operating temperature, in kelvin.
    pub high_k: f64,
}

impl Budget {
    /// The full-scale input, volts: the requirement's, else the
    /// measurand's rating (a bridge's sensitivity × excitation, or volts
    /// per unit × capacity); `None` when neither gives one.
    pub fn full_scale_volts(&self) -> Option<f64> {
        self.requirement
            .as_ref()
            .and_then(|r| r.full_scale_volts)
            .or(self.measurand.as_ref().and_then(|m| m.full_scale_volts))
    }
}

impl TemperatureRange {
    /// The excursions from the reference to each end of the range, in K.
    pub fn excursions(&self) -> [f64; 2] {
        [
            self.low_k - self.reference_k,
            self.high_k - self.reference_k,
        ]
    }
}

/// An amplitude of a common-mode voltage or of an allowed error.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Amplitude {
    /// The value in volts, in the stated form.
    pub volts: f64,
    /// rms, peak or peak-to-peak for an alternating value; `None` for a DC
    /// value.
    pub form: Option<AmplitudeForm>,
}

impl Amplitude {
    /// The peak value: a DC value is its own peak; a sinusoid's rms value is
    /// multiplied by √2, its peak-to-peak value halved.
    pub fn peak_volts(&self) -> f64 {
        self.volts * self.form.map_or(1.0, AmplitudeForm::to_peak_factor)
    }

    /// The same signal expressed in `form` (`None`: as a DC or peak value).
    pub fn volts_in(&self, form: Option<AmplitudeForm>) -> f64 {
        self.peak_volts() / form.map_or(1.0, AmplitudeForm::to_peak_factor)
    }

    /// Printed with its unit and form, e.g. `1.00 V rms`.
    pub fn describe(&self) -> String {
        describe_volts(self.volts, self.form)
    }

    /// The same signal's value in `form`, where that is defined.
    ///
    /// A constant (DC) value is its own rms and its own peak; it has no
    /// peak-to-peak value (a constant does not swing), so that is `None`.
    /// A sinusoid converts exactly through its peak (pk = √2 rms,
    /// pp = 2 pk); a form-less value of a sinusoid is `None` (validation
    /// refuses such a limit).
    pub fn in_form(&self, form: Option<AmplitudeForm>) -> Option<f64> {
        match (self.form, form) {
            (None, Some(AmplitudeForm::PeakToPeak)) => None,
            (None, _) => Some(self.volts),
            (Some(_), None) => None,
            (Some(_), Some(target)) => Some(self.peak_volts() / target.to_peak_factor()),
        }
    }
}

/// A voltage printed with its unit and, for alternating values, its form.
pub fn describe_volts(volts: f64, form: Option<AmplitudeForm>) -> String {
    match form {
        Some(form) => format!("{} {}", format_si(volts, "V"), form.suffix()),
        None => format_si(volts, "V"),
    }
}

/// A common-mode interference source.
#[derive(Debug, Clone, PartialEq)]
pub struct Interference {
    /// What it is, as the user named it.
    pub name: String,
    /// Its common-mode amplitude at the sensor.
    pub amplitude: Amplitude,
    /// Its frequency in hertz (0 for DC).
    pub frequency_hz: f64,
    /// The largest error it may leave, referred to the input; overrides the
    /// requirement's default when given.
    pub max_error: Option<ErrorLimit>,
    /// How far its frequency may stray either side, as a fraction (a mains
    /// frequency within ±1 %); 0 when it is exact. A digital filter's
    /// notch is judged at the worst frequency of that band.
    pub frequency_drift: f64,
    /// When the constant offset this (DC) source leaves is removed by a
    /// tare or zero calibration: what remains is judged instead.
    pub tare: Option<Tare>,
    /// When the source is a ripple on the bridge's excitation: its
    /// `amplitude` is then the common mode it puts on the bridge's outputs,
    /// and the bridge also passes it on differentially, in proportion to
    /// the reading.
    pub excitation_ripple: Option<ExcitationRipple>,
}

/// A ripple on a bridge's excitation, at the bridge.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExcitationRipple {
    /// The ripple as stated, at the excitation's source.
    pub stated: Amplitude,
    /// Its part across the bridge, volts in the stated form.
    pub across_bridge_v: f64,
    /// What the bridge passes on differentially at capacity (its
    /// sensitivity × the ripple across it), volts in the stated form.
    pub differential_v: f64,
}

/// A DC source's offset removed by a tare (zero calibration) at the
/// reference temperature: each unit reads its own offset then and
/// subtracts it, so what is left is the offset's change since, from the
/// temperature moving the parts' values (their TCRs) and from the common
/// mode itself moving (excitation drift, a ground that shifts).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tare {
    /// How far the common mode may move from its value at calibration,
    /// volts (either way).
    pub varies_by_v: f64,
}

impl Interference {
    /// The band its frequency may take, `[f (1 − d), f (1 + d)]`, Hz.
    pub fn frequency_band(&self) -> [f64; 2] {
        [
            self.frequency_hz * (1.0 - self.frequency_drift),
            self.frequency_hz * (1.0 + self.frequency_drift),
        ]
    }
}

/// A periodic common-mode waveform: a trapezoid switching between two
/// levels, as at a PWM-driven node or a ground that shifts with each
/// switching edge.
///
/// Time runs from the start of the rising edge. The duty cycle is the
/// share of the period between the 50 % points of the rising and the
/// falling edge; the edges are linear ramps.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trapezoid {
    /// The level between the falling and the rising edge, volts.
    pub low_v: f64,
    /// The level between the rising and the falling edge, volts.
    pub high_v: f64,
    /// The switching frequency, Hz.
    pub frequency_hz: f64,
    /// The duty cycle, 0 to 1.
    pub duty: f64,
    /// The rising edge's duration (0 % to 100 %), seconds.
    pub rise_s: f64,
    /// The falling edge's duration, seconds.
    pub fall_s: f64,
}

/// Which switching edge a time is counted from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Edge {
    /// The edge from the low to the high level.
    Rising,
    /// The edge from the high to the low level.
    Falling,
}

impl Edge {
    /// The name printed in reports.
    pub fn label(self) -> &'static str {
        match self {
            Edge::Rising => "rising",
            Edge::Falling => "falling",
        }
    }
}

/// Where a converter takes its sample: a window of `width_s` centred
/// `delay_s` after the start of an edge. What the converter reads is the
/// residue averaged over the window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SampleWindow {
    /// The edge the delay is counted from.
    pub after: Edge,
    /// From the start of that edge to the centre of the window, seconds.
    pub delay_s: f64,
    /// The window's width, seconds.
    pub width_s: f64,
}

/// A switching common-mode source and what its residue is judged on.
#[derive(Debug, Clone, PartialEq)]
pub struct Switching {
    /// What it is, as the user named it.
    pub name: String,
    /// The common-mode waveform at the sensor.
    pub waveform: Trapezoid,
    /// Harmonics are summed up to this frequency, Hz.
    pub harmonics_to_hz: f64,
    /// Whether `harmonics_to_hz` was written in the file (otherwise it is
    /// the default, ten over the shorter edge).
    pub harmonics_to_stated: bool,
    /// The largest residue it may leave, referred to the input; overrides
    /// the requirement's default when given. Also the band the residue
    /// must settle into after each edge.
    pub max_error: Option<ErrorLimit>,
    /// Time after the start of each edge in which the residue is not
    /// judged (readings taken then are discarded), seconds.
    pub blanking_s: Option<f64>,
    /// The converter's sampling window, when the residue is judged as the
    /// converter reads it.
    pub sample: Option<SampleWindow>,
    /// One edge rather than a periodic waveform: the rising edge of
    /// `waveform`, whose period is only the window shown after it (chosen
    /// when judged, long enough for the residue to settle).
    pub single_edge: bool,
}

/// An allowed error referred to the input.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ErrorLimit {
    /// An absolute voltage.
    Volts(Amplitude),
    /// A fraction of the full-scale differential input (peak error over
    /// full scale).
    OfFullScale {
        /// The fraction (e.g. 10e-6 for 10 ppm).
        fraction: f64,
        /// The full-scale differential input in volts.
        full_scale_volts: f64,
    },
    /// A fraction of a stated reading (peak error over the reading): a
    /// switching source's allowed residue as a share of what the sensor
    /// reads then, e.g. 1 % of a shunt's 20 mV.
    OfReading {
        /// The fraction.
        fraction: f64,
        /// The reading, volts referred to the input.
        reading_volts: f64,
    },
    /// A number of the converter's codes (LSB), as the reading shows them;
    /// with no form it is a peak figure (`±1 count`). Referred to the input
    /// through the chain's differential gain (see
    /// [`ErrorLimit::volts_rti`]).
    Codes {
        /// The number of codes.
        codes: f64,
        /// rms, peak or peak-to-peak; `None` for a peak (or DC) figure.
        form: Option<AmplitudeForm>,
    },
    /// An amount of the measured quantity (`0.005 kg`, `0.1 °C`); with no
    /// form it is a peak figure.
    InMeasurand {
        /// The amount, in the measurand's unit.
        amount: f64,
        /// rms, peak or peak-to-peak; `None` for a peak (or DC) figure.
        form: Option<AmplitudeForm>,
        /// Volts at the sensor per unit of the quantity.
        volts_per_unit: f64,
    },
}

impl ErrorLimit {
    /// The largest conversion `|ε|` (error over common mode, both in one
    /// form) that keeps the error of `source` within the limit: like is
    /// compared with like. The error a source leaves has the source's own
    /// waveform, so it is expressed in the limit's form first (see
    /// [`Amplitude::in_form`]); a fraction of full scale is a peak figure
    /// (the full scale is the largest differential input), so the error's
    /// peak is compared with it. `volts_per_code` is one converter code
    /// referred to the input, for a limit in codes. `None` where the
    /// limit's form means nothing for the source (a peak-to-peak limit on a
    /// DC source), or for codes without `volts_per_code`.
    pub fn allowed_conversion(
        &self,
        source: &Amplitude,
        volts_per_code: Option<f64>,
    ) -> Option<f64> {
        let limit = self.volts_rti(volts_per_code)?;
        let source_in_limit_form = source.in_form(limit.form)?;
        Some(limit.volts / source_in_limit_form)
    }

    /// The limit as a voltage referred to the input, in its form (a
    /// fraction of full scale or of a reading, and codes or measurand
    /// amounts with no form, are peak figures). A code is `volts_per_code`
    /// at the input; `None` for codes without it.
    pub fn volts_rti(&self, volts_per_code: Option<f64>) -> Option<Amplitude> {
        let peak = |volts: f64| Amplitude {
            volts,
            form: Some(AmplitudeForm::Peak),
        };
        Some(match *self {
            ErrorLimit::Volts(limit) => limit,
            ErrorLimit::OfFullScale {
                fraction,
                full_scale_volts,
            } => peak(fraction * full_scale_volts),
            ErrorLimit::OfReading {
                fraction,
                reading_volts,
            } => peak(fraction * reading_volts),
            ErrorLimit::Codes { codes, form } => Amplitude {
                volts: codes * volts_per_code?,
                form: Some(form.unwrap_or(AmplitudeForm::Peak)),
            },
            ErrorLimit::InMeasurand {
                amount,
                form,
                volts_per_unit,
                ..
            } => Amplitude {
                volts: amount * volts_per_unit,
                form: Some(form.unwrap_or(AmplitudeForm::Peak)),
            },
        })
    }

    /// The limit's form: rms, peak or peak-to-peak for a voltage that
    /// names one, `None` for a plain voltage (and for a fraction of full
    /// scale, which is a peak figure); codes and measurand amounts are
    /// peak figures unless they name a form.
    pub fn form(&self) -> Option<AmplitudeForm> {
        match self {
            ErrorLimit::Volts(limit) => limit.form,
            ErrorLimit::OfFullScale { .. } | ErrorLimit::OfReading { .. } => None,
            ErrorLimit::Codes { form, .. } | ErrorLimit::InMeasurand { form, .. } => {
                Some(form.unwrap_or(AmplitudeForm::Peak))
            }
        }
    }

    /// Whether the limit is stated in the converter's codes.
    pub fn is_in_codes(&self) -> bool {
        matches!(self, ErrorLimit::Codes { .. })
    }
}

/// Which total a requirement is judged on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Judgement {
    /// The sum of the magnitudes of all contributions: the linear bound,
    /// an upper bound to first order and the default.
    WorstCase,
    /// The exact solve at the worst sign corner (every toleranced value at
    /// one end of its range), searched as `cmrr yield` searches it: no
    /// larger than the linear bound where contributions are out of phase.
    WorstCorner,
    /// Systematic part plus the root-sum-square of the random ones.
    Rss,
    /// The values as given, with no tolerance.
    Nominal,
}

impl Judgement {
    /// The name printed in reports.
    pub fn label(self) -> &'static str {
        match self {
            Judgement::WorstCase => "worst case",
            Judgement::WorstCorner => "worst corner",
            Judgement::Rss => "RSS",
            Judgement::Nominal => "nominal",
        }
    }
}

/// A minimum CMRR at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MinimumCmrr {
    /// The frequency in hertz.
    pub frequency_hz: f64,
    /// The minimum CMRR in dB.
    pub cmrr_db: f64,
}

/// What the design must achieve.
#[derive(Debug, Clone, PartialEq)]
pub struct Requirement {
    /// Which total is compared with the limits.
    pub judged_on: Judgement,
    /// Minimum CMRR of the whole chain at given frequencies.
    pub min_cmrr: Vec<MinimumCmrr>,
    /// The default allowed error per interference source, referred to the
    /// input.
    pub max_error: Option<ErrorLimit>,
    /// The full-scale differential input, for errors in ppm or % of it.
    pub full_scale_volts: Option<f64>,
}

/// Facts about the application that call for safety cautions.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Safety {
    /// The front end is connected to a patient.
    pub patient_connected: bool,
    /// The measured circuit is referred to the mains.
    pub mains_referenced: bool,
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn amplitude_forms_convert_through_peak() {
        // Sinusoid: peak = sqrt(2) rms, peak-to-peak = 2 peak (common practice, no source).
        let rms = Amplitude {
            volts: 1.0,
            form: Some(AmplitudeForm::Rms),
        };
        assert_relative_eq!(rms.peak_volts(), 2f64.sqrt());
        assert_relative_eq!(
            rms.volts_in(Some(AmplitudeForm::PeakToPeak)),
            2.0 * 2f64.sqrt()
        );
        assert_eq!(rms.describe(), "1.00 V rms");
    }

    #[test]
    fn issue_10_dc_error_is_its_own_rms_and_peak() {
        // A constant's rms and peak are its magnitude; it has no
        // peak-to-peak swing (common practice, no source).
        let dc = Amplitude {
            volts: 99.9e-6,
            form: None,
        };
        assert_eq!(dc.in_form(Some(AmplitudeForm::Rms)), Some(99.9e-6));
        assert_eq!(dc.in_form(Some(AmplitudeForm::Peak)), Some(99.9e-6));
        assert_eq!(dc.in_form(Some(AmplitudeForm::PeakToPeak)), None);
        let limit = ErrorLimit::Volts(Amplitude {
            volts: 80e-6,
            form: Some(AmplitudeForm::Rms),
        });
        let source = Amplitude {
            volts: 2.5,
            form: None,
        };
        assert_relative_eq!(
            limit.allowed_conversion(&source, None).unwrap(),
            80e-6 / 2.5
        );
        // A sine source against a peak-to-peak limit: through the peak.
        let hum = Amplitude {
            volts: 1.0,
            form: Some(AmplitudeForm::Rms),
        };
        let pp = ErrorLimit::Volts(Amplitude {
            volts: 1e-3,
            form: Some(AmplitudeForm::PeakToPeak),
        });
        assert_relative_eq!(
            pp.allowed_conversion(&hum, None).unwrap(),
            1e-3 / (2.0 * 2f64.sqrt())
        );
    }
}
