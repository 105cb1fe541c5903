//! Physical dimensions a budget field can hold, and the unit spellings that
//! belong to each.

use std::fmt;

/// The physical dimension of a quantity.
///
/// Every budget field expects exactly one dimension; a value written with a
/// unit of another dimension is refused by the parser.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Dimension {
    /// Resistance in ohms.
    Resistance,
    /// Conductance in siemens (a transconductance).
    Conductance,
    /// Capacitance in farads.
    Capacitance,
    /// Inductance in henries.
    Inductance,
    /// Frequency in hertz.
    Frequency,
    /// Voltage in volts.
    Voltage,
    /// Current in amperes.
    Current,
    /// Time in seconds.
    Time,
    /// A rate of change of voltage in volts per second (an edge's dV/dt).
    SlewRate,
    /// Absolute temperature in kelvin (degrees Celsius are converted).
    Temperature,
    /// Length in metres.
    Length,
    /// Capacitance per unit length in farads per metre (cable capacitance).
    CapacitancePerLength,
    /// A dimensionless fraction written with `%` or `ppm` (a tolerance, a share).
    Fraction,
    /// A temperature coefficient in parts per million per kelvin.
    TemperatureCoefficient,
    /// A voltage ratio written in decibels (`dB`, always 20 log10).
    Decibels,
    /// A voltage gain: decibels, or a plain ratio in V/V.
    Gain,
    /// A plain number with no unit (a current gain β, a count).
    Number,
}

impl Dimension {
    /// A short description for error messages, e.g. "a resistance (Ω)".
    pub fn describe(self) -> &'static str {
        match self {
            Dimension::Resistance => "a resistance (Ω or ohm, e.g. `10k`, `4k7`, `350 Ω`)",
            Dimension::Conductance => "a conductance (S, e.g. `20 mS`)",
            Dimension::Capacitance => "a capacitance (F, e.g. `4.7 nF`, `100p`)",
            Dimension::Inductance => "an inductance (H, e.g. `10 uH`)",
            Dimension::Frequency => "a frequency (Hz, e.g. `50 Hz`, `10 kHz`, `DC`)",
            Dimension::Voltage => "a voltage (V, e.g. `1 V rms`, `2.5 V`, `10 mV pp`)",
            Dimension::Current => "a current (A, e.g. `1 mA`)",
            Dimension::Time => "a time (s, e.g. `10 ms`)",
            Dimension::SlewRate => "a slew rate (V/s, e.g. `2 V/ns`, `50 V/us`, `1 kV/us`)",
            Dimension::Temperature => "a temperature (K or degC, e.g. `85 degC`, `300 K`)",
            Dimension::Length => "a length (m, e.g. `5 m`, `300 mm`)",
            Dimension::CapacitancePerLength => "a capacitance per length (F/m, e.g. `100 pF/m`)",
            Dimension::Fraction => "a fraction (% or ppm, e.g. `0.1 %`, `50 ppm`)",
            Dimension::TemperatureCoefficient => {
                "a temperature coefficient (ppm/K, e.g. `5 ppm/K`)"
            }
            Dimension::Decibels => "a ratio in decibels (dB, e.g. `110 dB`)",
            Dimension::Gain => "a gain (dB or V/V, e.g. `120 dB`, `1M`)",
            Dimension::Number => "a plain number (e.g. `200`)",
        }
    }

    /// The magnitudes a value of this dimension may take in a budget, in
    /// SI units (decibels and gains as linear ratios), from `low` to
    /// `high`; zero is judged by the field (some take it, some do not).
    /// Wide enough for any front end an engineer draws, narrow enough that
    /// the solve stays in double precision's range: a value outside is a
    /// slip (a missing prefix, a stray exponent), not a design. The README
    /// lists the same table.
    pub fn plausible(self) -> (f64, f64) {
        match self {
            Dimension::Resistance => (1e-6, 1e15),
            Dimension::Conductance => (1e-15, 1e6),
            Dimension::Capacitance => (1e-18, 1.0),
            Dimension::Inductance => (1e-12, 1e3),
            Dimension::Frequency => (1e-6, 1e12),
            Dimension::Voltage => (1e-12, 1e12),
            Dimension::Current => (1e-18, 1e3),
            Dimension::Time => (1e-15, 1e6),
            Dimension::SlewRate => (1e-6, 1e15),
            Dimension::Temperature => (1.0, 1000.0),
            Dimension::Length => (1e-6, 1e5),
            Dimension::CapacitancePerLength => (1e-15, 1e-6),
            Dimension::Fraction => (1e-12, 1e3),
            Dimension::TemperatureCoefficient => (1e-12, 1e-2),
            Dimension::Decibels => (1e-6, 1e15),
            Dimension::Gain => (1e-6, 1e12),
            Dimension::Number => (1e-12, 1e12),
        }
    }

    /// The SI unit symbol used when printing a value of this dimension.
    pub fn symbol(self) -> &'static str {
        match self {
            Dimension::Resistance => "Ω",
            Dimension::Conductance => "S",
            Dimension::Capacitance => "F",
            Dimension::Inductance => "H",
            Dimension::Frequency => "Hz",
            Dimension::Voltage => "V",
            Dimension::Current => "A",
            Dimension::Time => "s",
            Dimension::SlewRate => "V/s",
            Dimension::Temperature => "K",
            Dimension::Length => "m",
            Dimension::CapacitancePerLength => "F/m",
            Dimension::Fraction => "",
            Dimension::TemperatureCoefficient => "ppm/K",
            Dimension::Decibels => "dB",
            Dimension::Gain => "V/V",
            Dimension::Number => "",
        }
    }

    /// Whether a bare number (optionally with an SI prefix, as in `10k` or
    /// `100n`) is accepted for this dimension.
    ///
    /// Resistances and capacitances are written that way on every schematic,
    /// and a gain is naturally a plain ratio. Fractions are not: a bare `0.1`
    /// could mean 0.1 % or 10 %, so they must carry `%` or `ppm`.
    pub fn accepts_bare_number(self) -> bool {
        matches!(
            self,
            Dimension::Resistance | Dimension::Capacitance | Dimension::Gain | Dimension::Number
        )
    }
}

impl fmt::Display for Dimension {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let name = match self {
            Dimension::Resistance => "resistance",
            Dimension::Conductance => "conductance",
            Dimension::Capacitance => "capacitance",
            Dimension::Inductance => "inductance",
            Dimension::Frequency => "frequency",
            Dimension::Voltage => "voltage",
            Dimension::Current => "current",
            Dimension::Time => "time",
            Dimension::Temperature => "temperature",
            Dimension::Length => "length",
            Dimension::CapacitancePerLength => "capacitance per length",
            Dimension::Fraction => "fraction",
            Dimension::TemperatureCoefficient => "temperature coefficient",
            Dimension::SlewRate => "slew rate",
            Dimension::Decibels => "decibel ratio",
            Dimension::Gain => "gain",
            Dimension::Number => "number",
        };
        f.write_str(name)
    }
}

/// How a unit spelling maps onto a dimension and a scale to SI.
#[derive(Debug, Clone, Copy)]
pub(crate) struct UnitSpelling {
    /// The text as written after the (optional) prefix.
    pub text: &'static str,
    /// The dimension it measures.
    pub dimension: Dimension,
    /// Multiply by this to get the SI value (for `%`, 0.01).
    pub scale: f64,
    /// Offset added after scaling (degrees Celsius to kelvin).
    pub offset: f64,
    /// Whether an SI prefix may stand before it.
    pub takes_prefix: bool,
    /// Whether the value is in decibels (converted to a linear ratio).
    pub decibel: bool,
}

const fn unit(text: &'static str, dimension: Dimension, scale: f64) -> UnitSpelling {
    UnitSpelling {
        text,
        dimension,
        scale,
        offset: 0.0,
        takes_prefix: true,
        decibel: false,
    }
}

const fn fixed(text: &'static str, dimension: Dimension, scale: f64) -> UnitSpelling {
    UnitSpelling {
        text,
        dimension,
        scale,
        offset: 0.0,
        takes_prefix: false,
        decibel: false,
    }
}

/// Every unit spelling the parser knows, longest first within a family so
/// that `F/m` wins over `F` and `ppm/K` over `ppm`.
pub(crate) const UNITS: &[UnitSpelling] = &[
    unit("ohms", Dimension::Resistance, 1.0),
    unit("ohm", Dimension::Resistance, 1.0),
    unit("Ohm", Dimension::Resistance, 1.0),
    unit("\u{03A9}", Dimension::Resistance, 1.0),
    unit("\u{2126}", Dimension::Resistance, 1.0),
    unit("R", Dimension::Resistance, 1.0),
    unit("S", Dimension::Conductance, 1.0),
    unit("F/m", Dimension::CapacitancePerLength, 1.0),
    unit("F", Dimension::Capacitance, 1.0),
    unit("H", Dimension::Inductance, 1.0),
    unit("Hz", Dimension::Frequency, 1.0),
    unit("V/V", Dimension::Gain, 1.0),
    unit("V/s", Dimension::SlewRate, 1.0),
    unit("V/ms", Dimension::SlewRate, 1e3),
    unit("V/us", Dimension::SlewRate, 1e6),
    unit("V/\u{00B5}s", Dimension::SlewRate, 1e6),
    unit("V/\u{03BC}s", Dimension::SlewRate, 1e6),
    unit("V/ns", Dimension::SlewRate, 1e9),
    unit("V/ps", Dimension::SlewRate, 1e12),
    unit("V", Dimension::Voltage, 1.0),
    unit("A", Dimension::Current, 1.0),
    unit("s", Dimension::Time, 1.0),
    unit("K", Dimension::Temperature, 1.0),
    UnitSpelling {
        text: "degC",
        dimension: Dimension::Temperature,
        scale: 1.0,
        offset: 273.15,
        takes_prefix: false,
        decibel: false,
    },
    UnitSpelling {
        text: "°C",
        dimension: Dimension::Temperature,
        scale: 1.0,
        offset: 273.15,
        takes_prefix: false,
        decibel: false,
    },
    unit("m", Dimension::Length, 1.0),
    fixed("ppm/K", Dimension::TemperatureCoefficient, 1e-6),
    fixed("ppm/degC", Dimension::TemperatureCoefficient, 1e-6),
    fixed("ppm/°C", Dimension::TemperatureCoefficient, 1e-6),
    fixed("ppm", Dimension::Fraction, 1e-6),
    fixed("%", Dimension::Fraction, 1e-2),
    UnitSpelling {
        text: "dB",
        dimension: Dimension::Decibels,
        scale: 1.0,
        offset: 0.0,
        takes_prefix: false,
        decibel: true,
    },
];

/// SI prefixes accepted before a unit, with their multipliers.
pub(crate) const PREFIXES: &[(&str, f64)] = &[
    ("f", 1e-15),
    ("p", 1e-12),
    ("n", 1e-9),
    ("u", 1e-6),
    ("µ", 1e-6),
    ("μ", 1e-6),
    ("m", 1e-3),
    ("k", 1e3),
    ("M", 1e6),
    ("G", 1e9),
    ("T", 1e12),
];

/// The multiplier of an SI prefix, if `text` is one.
pub(crate) fn prefix_multiplier(text: &str) -> Option<f64> {
    PREFIXES
        .iter()
        .find(|(p, _)| *p == text)
        .map(|(_, multiplier)| *multiplier)
}
