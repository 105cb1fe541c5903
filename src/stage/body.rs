//! A patient's body as part of the source network: its coupling to the
//! mains and to earth, the reference (right-leg) electrode, and a
//! right-leg drive.
//!
//! The body is one node b. The mains, at `V` against earth, couples to it
//! through `C_p`; the body sits on earth through `C_b`; the amplifier's
//! common (the reference of every voltage in the chain) sits on earth
//! through the isolation capacitance `C_iso`, or is earthed; the mains may
//! also couple to the common through `C_s`. With the earth node and the
//! mains node taken as one supernode and eliminated, exactly, the body
//! sees, against the common, a capacitance and a current source:
//!
//! ```text
//! C_eq  = (C_p + C_b)(C_iso + C_s) / C_t
//! I_eq  = jω V (C_p C_iso − C_b C_s) / C_t,   C_t = C_p + C_b + C_iso + C_s
//! ```
//!
//! (earthed common: `C_eq = C_p + C_b`, `I_eq = jω V C_p`). This is the
//! displacement-current model of bioelectric interference (Metting van
//! Rijn, Peper and Grimbergen, "High-quality recording of bioelectric
//! events", Med. Biol. Eng. Comput. 28, 1990, section 2; from memory).
//!
//! The reference electrode (`R ∥ C`) returns the body to the common, or to
//! the output of a right-leg drive through its current-limiting resistor
//! `R_o`. The drive senses the average of the two input pins and drives
//! `v_o = −G(s)·(v_p + v_n)/2`, with `G` a gain with one pole or an
//! integrator.

use crate::model::ParamId;

/// The body, its coupling and its return to the amplifier.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Body {
    /// `C_p`: from the mains to the body.
    pub mains_coupling: ParamId,
    /// `C_b`: from the body to earth.
    pub to_earth: ParamId,
    /// `C_iso`: from the amplifier's common to earth; none when the common
    /// is earthed.
    pub common_to_earth: Option<ParamId>,
    /// `C_s`: from the mains to the amplifier's common.
    pub mains_to_common: Option<ParamId>,
    /// The reference (right-leg) electrode; none for a two-electrode
    /// amplifier, whose body returns only through the input pins.
    pub reference_electrode: Option<ReferenceElectrode>,
    /// A right-leg drive behind the reference electrode; none when the
    /// electrode goes to the common.
    pub drive: Option<RightLegDrive>,
    /// The largest DC voltage (half-cell potential difference) between two
    /// electrodes, either sign, V; a headroom case, not a CMRR term.
    pub electrode_offset: f64,
}

/// The reference electrode's impedance, `R ∥ C`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReferenceElectrode {
    /// Its resistance.
    pub resistance: ParamId,
    /// Its parallel capacitance.
    pub capacitance: Option<ParamId>,
}

/// A right-leg drive: an amplifier that senses the pins' common mode and
/// drives the reference electrode against it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RightLegDrive {
    /// Its gain from the pins' average to its output (inverting).
    pub compensation: Compensation,
    /// The current-limiting resistor between its output and the electrode.
    pub output_resistance: ParamId,
    /// A sensing resistor from each pin to its summing node (a virtual
    /// ground); none when it senses without loading the pins.
    pub sense_resistance: Option<ParamId>,
    /// The range its output can swing over; it saturates beyond.
    pub output_range: Option<super::VoltageRange>,
}

/// How a right-leg drive's gain falls with frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Compensation {
    /// `G = G0 / (1 + jf/f_p)`.
    SinglePole {
        /// `G0`, V/V.
        gain: ParamId,
        /// `f_p`, Hz.
        corner: ParamId,
    },
    /// `G = f_u / (jf)`: unity gain at `f_u`.
    Integrator {
        /// `f_u`, Hz.
        unity_gain: ParamId,
    },
}

/// A body's frequency-independent values.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct BodyValues {
    /// `C_eq`, F: the body's capacitance to the common, earth eliminated.
    pub to_common: f64,
    /// `(C_p C_iso − C_b C_s)/C_t`, F: `I_eq = jω V` times this.
    pub injection: f64,
    /// The reference electrode's conductance, S (0: none).
    pub electrode_g: f64,
    /// Its capacitance, F.
    pub electrode_c: f64,
    /// Whether there is a reference electrode.
    pub has_electrode: bool,
    /// The drive's output resistor, Ω (0 without a drive).
    pub output_r: f64,
    /// The drive's gain.
    pub gain: DriveGain,
}

/// A right-leg drive's gain, in its frequency-independent values.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum DriveGain {
    /// No drive: the reference electrode goes to the common.
    #[default]
    None,
    /// `G0 / (1 + jω/ω_p)`.
    SinglePole {
        /// `G0`.
        gain: f64,
        /// `1/ω_p`, s.
        inverse_corner: f64,
    },
    /// `ω_u / (jω)`.
    Integrator {
        /// `ω_u`, rad/s.
        omega_u: f64,
    },
}

impl Body {
    /// Its values for one set of parameter values.
    pub fn values(&self, v: &[f64]) -> BodyValues {
        let value = |id: ParamId| v[id.0];
        let optional = |id: Option<ParamId>| id.map_or(0.0, value);
        let (cp, cb, cs) = (
            value(self.mains_coupling),
            value(self.to_earth),
            optional(self.mains_to_common),
        );
        let (to_common, injection) = match self.common_to_earth {
            Some(iso) => coupling(cp, cb, value(iso), cs),
            None => (cp + cb, cp),
        };
        let (electrode_g, electrode_c) = self.reference_electrode.map_or((0.0, 0.0), |e| {
            (1.0 / value(e.resistance), optional(e.capacitance))
        });
        let (output_r, gain) = match self.drive {
            None => (0.0, DriveGain::None),
            Some(drive) => (
                value(drive.output_resistance),
                match drive.compensation {
                    Compensation::SinglePole { gain, corner } => DriveGain::SinglePole {
                        gain: value(gain),
                        inverse_corner: 1.0 / (2.0 * std::f64::consts::PI * value(corner)),
                    },
                    Compensation::Integrator { unity_gain } => DriveGain::Integrator {
                        omega_u: 2.0 * std::f64::consts::PI * value(unity_gain),
                    },
                },
            ),
        };
        BodyValues {
            to_common,
            injection,
            electrode_g,
            electrode_c,
            has_electrode: self.reference_electrode.is_some(),
            output_r,
            gain,
        }
    }

    /// The conductance each sensing resistor puts from its pin to the
    /// common, S.
    pub fn sense_conductance(&self, v: &[f64]) -> f64 {
        self.drive
            .and_then(|d| d.sense_resistance)
            .map_or(0.0, |id| 1.0 / v[id.0])
    }
}

/// The body's capacitance to the common and the injection capacitance,
/// earth eliminated: `((C_p + C_b)(C_iso + C_s)/C_t, (C_p C_iso − C_b C_s)/C_t)`.
pub fn coupling(cp: f64, cb: f64, iso: f64, cs: f64) -> (f64, f64) {
    let total = cp + cb + iso + cs;
    ((cp + cb) * (iso + cs) / total, (cp * iso - cb * cs) / total)
}

impl BodyValues {
    /// The same body with the drive taken away and the reference electrode
    /// to the common: what the drive is compared against.
    pub fn without_drive(&self) -> BodyValues {
        BodyValues {
            output_r: 0.0,
            gain: DriveGain::None,
            ..*self
        }
    }

    /// Whether there is a drive.
    pub fn driven(&self) -> bool {
        !matches!(self.gain, DriveGain::None)
    }
}
