//! Units at the edges: parsing `"3.2 mH"` from a record and printing `1.186 kHz` in a
//! package. Inside the engine every value is a plain SI `f64`; the [`Unit`] travels
//! beside it only so that it can be checked and printed.
//!
//! Absolute temperature (`degC`) and temperature difference (`K`) are different units
//! on purpose: adding two absolute temperatures is a mistake the types should show.

use std::fmt;

/// The unit of a value held in SI base units.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Unit {
    Volt,
    Ampere,
    Hertz,
    /// Angular frequency, rad/s.
    RadianPerSecond,
    Watt,
    VoltAmpere,
    Var,
    Henry,
    Farad,
    Ohm,
    /// Conductance or admittance magnitude.
    Siemens,
    Second,
    Joule,
    /// Absolute temperature on the Celsius scale.
    DegreeCelsius,
    /// Temperature difference.
    Kelvin,
    /// A pure number (ratio, index, per-unit); printed without a unit.
    One,
    /// A ratio printed as a percentage; the value is still the fraction (0.05 = 5 %).
    Percent,
    /// A relative temperature coefficient, held per kelvin (-0.0029 /K), printed in
    /// percent per kelvin (-0.29 %/K), as module datasheets give it.
    PercentPerKelvin,
    /// Decibel of a voltage or current ratio, 20 log10.
    Decibel,
    /// Plane angle, held in radians, printed in degrees.
    Degree,
    /// Thermal resistance, kelvin of temperature rise per watt.
    KelvinPerWatt,
    /// A long time (capacitor life), held in seconds, printed in hours.
    Hour,
}

impl Unit {
    /// The symbol printed after a value (empty for a pure number).
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Hertz => "Hz",
            Unit::RadianPerSecond => "rad/s",
            Unit::Watt => "W",
            Unit::VoltAmpere => "VA",
            Unit::Var => "var",
            Unit::Henry => "H",
            Unit::Farad => "F",
            Unit::Ohm => "Ω",
            Unit::Siemens => "S",
            Unit::Second => "s",
            Unit::Joule => "J",
            Unit::DegreeCelsius => "°C",
            Unit::Kelvin => "K",
            Unit::One => "",
            Unit::Percent => "%",
            Unit::PercentPerKelvin => "%/K",
            Unit::Decibel => "dB",
            Unit::Degree => "°",
            Unit::KelvinPerWatt => "K/W",
            Unit::Hour => "h",
        }
    }

    /// The name of the unit of the stored SI value in `results.json`, ASCII only so that
    /// scripts can match it. Percent and degree values are stored as fractions and
    /// radians, so their code is that of the stored value (`1`, `rad`).
    pub fn code(self) -> &'static str {
        match self {
            Unit::Volt => "V",
            Unit::Ampere => "A",
            Unit::Hertz => "Hz",
            Unit::RadianPerSecond => "rad/s",
            Unit::Watt => "W",
            Unit::VoltAmpere => "VA",
            Unit::Var => "var",
            Unit::Henry => "H",
            Unit::Farad => "F",
            Unit::Ohm => "ohm",
            Unit::Siemens => "S",
            Unit::Second => "s",
            Unit::Joule => "J",
            Unit::DegreeCelsius => "degC",
            Unit::Kelvin => "K",
            Unit::One | Unit::Percent => "1",
            Unit::PercentPerKelvin => "1/K",
            Unit::Decibel => "dB",
            Unit::Degree => "rad",
            Unit::KelvinPerWatt => "K/W",
            Unit::Hour => "s",
        }
    }

    /// The unit a `results.json` code stands for, for printing a stored value: the
    /// inverse of [`Unit::code`] where that is one-to-one; `1` reads as a pure number,
    /// `s` as seconds and `rad` as degrees.
    pub fn from_code(code: &str) -> Unit {
        const ALL: [Unit; 21] = [
            Unit::Volt,
            Unit::Ampere,
            Unit::Hertz,
            Unit::RadianPerSecond,
            Unit::Watt,
            Unit::VoltAmpere,
            Unit::Var,
            Unit::Henry,
            Unit::Farad,
            Unit::Ohm,
            Unit::Siemens,
            Unit::Second,
            Unit::Joule,
            Unit::DegreeCelsius,
            Unit::Kelvin,
            Unit::One,
            Unit::PercentPerKelvin,
            Unit::Decibel,
            Unit::Degree,
            Unit::KelvinPerWatt,
            Unit::Percent,
        ];
        ALL.into_iter()
            .find(|u| u.code() == code)
            .unwrap_or(Unit::One)
    }

    /// What the unit measures, as an engineer would say it in an error message.
    pub fn quantity_name(self) -> &'static str {
        match self {
            Unit::Volt => "a voltage",
            Unit::Ampere => "a current",
            Unit::Hertz => "a frequency",
            Unit::RadianPerSecond => "an angular frequency",
            Unit::Watt => "a power",
            Unit::VoltAmpere => "an apparent power",
            Unit::Var => "a reactive power",
            Unit::Henry => "an inductance",
            Unit::Farad => "a capacitance",
            Unit::Ohm => "a resistance",
            Unit::Siemens => "a conductance",
            Unit::Second => "a time",
            Unit::Joule => "an energy",
            Unit::DegreeCelsius => "a temperature",
            Unit::Kelvin => "a temperature difference",
            Unit::One | Unit::Percent => "a ratio",
            Unit::PercentPerKelvin => "a temperature coefficient",
            Unit::Decibel => "a level",
            Unit::Degree => "an angle",
            Unit::KelvinPerWatt => "a thermal resistance",
            Unit::Hour => "a lifetime",
        }
    }

    /// Whether SI prefixes are used when printing (k, m, µ ...).
    fn takes_prefix(self) -> bool {
        !matches!(
            self,
            Unit::One
                | Unit::Percent
                | Unit::PercentPerKelvin
                | Unit::Decibel
                | Unit::Degree
                | Unit::DegreeCelsius
                | Unit::KelvinPerWatt
                | Unit::Hour
        )
    }

    /// The value as printed in this unit (percent and degrees are scaled).
    pub fn display_scale(self) -> f64 {
        match self {
            Unit::Percent | Unit::PercentPerKelvin => 100.0,
            Unit::Degree => 180.0 / std::f64::consts::PI,
            Unit::Hour => 1.0 / 3600.0,
            _ => 1.0,
        }
    }
}

impl fmt::Display for Unit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

/// Why a text could not be read as a value of the expected unit.
#[derive(Clone, Debug, PartialEq)]
pub enum UnitError {
    /// No number at the start: `"abc"`.
    NotANumber,
    /// A number with no unit where one is needed: `"400"` for a voltage.
    MissingUnit { expected: Unit },
    /// A unit symbol (or prefix) that is not known.
    UnknownUnit { text: String },
    /// A well-formed value of another dimension: `"3.2 mV"` for an inductance.
    WrongDimension { expected: Unit, found: Unit },
}

impl fmt::Display for UnitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            UnitError::NotANumber => f.write_str("not a number"),
            UnitError::MissingUnit { expected } => write!(
                f,
                "missing unit: expected {} ({})",
                expected.quantity_name(),
                input_symbol(*expected)
            ),
            UnitError::UnknownUnit { text } => write!(f, "unknown unit `{text}`"),
            UnitError::WrongDimension { expected, found } => write!(
                f,
                "expected {} ({}), got {}",
                expected.quantity_name(),
                input_symbol(*expected),
                found.quantity_name()
            ),
        }
    }
}

/// The symbol a user types for a unit (ASCII where the printed one is not).
pub fn input_symbol(unit: Unit) -> &'static str {
    match unit {
        Unit::Ohm => "ohm",
        Unit::DegreeCelsius => "degC",
        Unit::Degree => "deg",
        Unit::One => "no unit",
        other => other.symbol(),
    }
}

/// Unit symbols accepted in a record, longest first so that `Hz` wins over `H`.
const INPUT_UNITS: &[(&str, Unit)] = &[
    ("%/degC", Unit::PercentPerKelvin),
    ("%/°C", Unit::PercentPerKelvin),
    ("rad/s", Unit::RadianPerSecond),
    ("%/K", Unit::PercentPerKelvin),
    ("K/W", Unit::KelvinPerWatt),
    ("°C/W", Unit::KelvinPerWatt),
    ("degC", Unit::DegreeCelsius),
    ("ohms", Unit::Ohm),
    ("ohm", Unit::Ohm),
    ("Ohm", Unit::Ohm),
    ("var", Unit::Var),
    ("deg", Unit::Degree),
    ("°C", Unit::DegreeCelsius),
    ("Hz", Unit::Hertz),
    ("VA", Unit::VoltAmpere),
    ("dB", Unit::Decibel),
    ("Ω", Unit::Ohm),
    ("Ω", Unit::Ohm), // U+2126 OHM SIGN, which some keyboards produce
    ("°", Unit::Degree),
    ("V", Unit::Volt),
    ("A", Unit::Ampere),
    ("W", Unit::Watt),
    ("H", Unit::Henry),
    ("F", Unit::Farad),
    ("S", Unit::Siemens),
    ("s", Unit::Second),
    ("J", Unit::Joule),
    ("K", Unit::Kelvin),
    ("%", Unit::Percent),
    ("h", Unit::Hour),
];

/// SI prefixes accepted in a record. `u`, `µ` (micro sign) and `μ` (Greek mu) all mean micro.
const PREFIXES: &[(&str, f64)] = &[
    ("p", 1e-12),
    ("n", 1e-9),
    ("u", 1e-6),
    ("µ", 1e-6),
    ("μ", 1e-6),
    ("m", 1e-3),
    ("k", 1e3),
    ("M", 1e6),
    ("G", 1e9),
];

/// Splits `"3.2 mH"` into the number and the unit text after it.
fn split_number(text: &str) -> Option<(f64, &str)> {
    let text = text.trim();
    let bytes = text.as_bytes();
    let mut end = 0;
    let mut seen_digit = false;
    let mut seen_exp = false;
    while end < bytes.len() {
        let c = bytes[end];
        let ok = match c {
            b'0'..=b'9' => {
                seen_digit = true;
                true
            }
            b'+' | b'-' => end == 0 || matches!(bytes[end - 1], b'e' | b'E'),
            b'.' => !seen_exp,
            // An exponent only when digits follow, so that `3 e` is not eaten.
            b'e' | b'E' => {
                seen_digit
                    && !seen_exp
                    && bytes
                        .get(end + 1)
                        .is_some_and(|n| n.is_ascii_digit() || *n == b'-' || *n == b'+')
            }
            _ => false,
        };
        if !ok {
            break;
        }
        if matches!(c, b'e' | b'E') {
            seen_exp = true;
        }
        end += 1;
    }
    if !seen_digit {
        return None;
    }
    let number: f64 = text[..end].parse().ok()?;
    Some((number, text[end..].trim()))
}

/// Reads the unit text (`"mH"`, `"kHz"`, `"%"`) into its unit and scale factor.
fn parse_unit_text(unit_text: &str) -> Result<(Unit, f64), UnitError> {
    for (symbol, unit) in INPUT_UNITS {
        if let Some(prefix) = unit_text.strip_suffix(symbol) {
            if prefix.is_empty() {
                return Ok((*unit, 1.0));
            }
            if !unit.takes_prefix() {
                continue;
            }
            if let Some((_, scale)) = PREFIXES.iter().find(|(p, _)| *p == prefix) {
                return Ok((*unit, *scale));
            }
        }
    }
    Err(UnitError::UnknownUnit {
        text: unit_text.to_string(),
    })
}

/// Parses a record value such as `"400 V"`, `"22 uF"` or `"5 %"` into SI units.
///
/// `expected` is the unit the key calls for. A ratio ([`Unit::One`] or [`Unit::Percent`])
/// accepts a bare number (`0.05`) or a percentage (`5 %`); every other unit needs its
/// symbol, because a bare `400` in an engineering record is ambiguous.
pub fn parse_value(text: &str, expected: Unit) -> Result<f64, UnitError> {
    let (number, unit_text) = split_number(text).ok_or(UnitError::NotANumber)?;
    let is_ratio = matches!(expected, Unit::One | Unit::Percent);
    if unit_text.is_empty() {
        return if is_ratio {
            Ok(number)
        } else {
            Err(UnitError::MissingUnit { expected })
        };
    }
    let (found, scale) = parse_unit_text(unit_text)?;
    let value = number * scale;
    match (expected, found) {
        (e, f) if e == f => Ok(value / f.display_scale()),
        (Unit::One, Unit::Percent) => Ok(value / 100.0),
        _ => Err(UnitError::WrongDimension { expected, found }),
    }
}

/// Engineering prefix for a value: the power of 1000 that leaves 1 <= |mantissa| < 1000.
fn engineering_prefix(value: f64) -> (&'static str, f64) {
    const STEPS: &[(&str, f64)] = &[
        ("G", 1e9),
        ("M", 1e6),
        ("k", 1e3),
        ("", 1.0),
        ("m", 1e-3),
        ("µ", 1e-6),
        ("n", 1e-9),
        ("p", 1e-12),
    ];
    let magnitude = value.abs();
    if magnitude == 0.0 || !magnitude.is_finite() {
        return ("", 1.0);
    }
    for (prefix, scale) in STEPS {
        // A tiny tolerance keeps 999.99995 from printing as "1000".
        if magnitude >= scale * (1.0 - 5e-5) {
            return (prefix, *scale);
        }
    }
    ("p", 1e-12)
}

/// A number with `digits` significant figures, trailing zeros removed: `1.186`, `22.1`, `0.05`.
pub fn format_number(value: f64, digits: usize) -> String {
    if value == 0.0 {
        return "0".to_string();
    }
    if !value.is_finite() {
        return if value.is_nan() {
            "NaN".to_string()
        } else if value > 0.0 {
            "∞".to_string()
        } else {
            "-∞".to_string()
        };
    }
    let magnitude = value.abs().log10().floor() as i32;
    if !(-4..=8).contains(&magnitude) {
        let mantissa = value / 10f64.powi(magnitude);
        let m = trim_zeros(format!("{:.*}", digits.saturating_sub(1), mantissa));
        return format!("{m}e{magnitude}");
    }
    let decimals = (digits as i32 - 1 - magnitude).max(0) as usize;
    let text = format!("{value:.decimals$}");
    let text = trim_zeros(text);
    if text == "-0" {
        "0".to_string()
    } else {
        text
    }
}

fn trim_zeros(text: String) -> String {
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// The number and the prefixed unit symbol, kept apart so that callers can typeset them.
pub fn split_display(value: f64, unit: Unit) -> (String, String) {
    let shown = value * unit.display_scale();
    if unit.takes_prefix() {
        let (prefix, scale) = engineering_prefix(shown);
        (
            format_number(shown / scale, 4),
            format!("{prefix}{}", unit.symbol()),
        )
    } else {
        (format_number(shown, 4), unit.symbol().to_string())
    }
}

/// A value as printed in a package or on the terminal: `1.186 kHz`, `0.9043`, `5 %`.
pub fn format_value(value: f64, unit: Unit) -> String {
    let (number, symbol) = split_display(value, unit);
    if symbol.is_empty() {
        number
    } else if symbol == "°" {
        format!("{number}°")
    } else {
        format!("{number} {symbol}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1.0)
    }

    #[test]
    fn temperature_coefficients_are_per_kelvin() {
        // A coefficient per degree Celsius is the same per kelvin: a temperature
        // difference of 1 degC is 1 K (BIPM, SI Brochure, 9th ed. (2019), 2.3.1).
        for text in ["-0.29 %/K", "-0.29 %/degC", "-0.29 %/°C"] {
            assert!(close(
                parse_value(text, Unit::PercentPerKelvin).unwrap(),
                -0.0029
            ));
        }
        assert!(parse_value("-0.29 %", Unit::PercentPerKelvin).is_err());
        assert_eq!(format_value(-0.0029, Unit::PercentPerKelvin), "-0.29 %/K");
    }

    #[test]
    fn parses_prefixes_and_symbols() {
        // SI prefixes: BIPM, "The International System of Units", 9th ed. (2019), Table 7.
        assert!(close(parse_value("400 V", Unit::Volt).unwrap(), 400.0));
        assert!(close(parse_value("3 kHz", Unit::Hertz).unwrap(), 3e3));
        assert!(close(parse_value("22 uF", Unit::Farad).unwrap(), 22e-6));
        assert!(close(parse_value("22 µF", Unit::Farad).unwrap(), 22e-6));
        assert!(close(parse_value("22 μF", Unit::Farad).unwrap(), 22e-6));
        assert!(close(parse_value("3.2 mH", Unit::Henry).unwrap(), 3.2e-3));
        assert!(close(parse_value("2.2 kW", Unit::Watt).unwrap(), 2200.0));
        assert!(close(parse_value("12 ohm", Unit::Ohm).unwrap(), 12.0));
        assert!(close(parse_value("12 Ω", Unit::Ohm).unwrap(), 12.0));
        assert!(close(parse_value("1.5 MΩ", Unit::Ohm).unwrap(), 1.5e6));
        assert!(close(
            parse_value("45 degC", Unit::DegreeCelsius).unwrap(),
            45.0
        ));
        assert!(close(parse_value("5 %", Unit::Percent).unwrap(), 0.05));
        assert!(close(parse_value("5%", Unit::One).unwrap(), 0.05));
        assert!(close(parse_value("0.8", Unit::One).unwrap(), 0.8));
        assert!(close(parse_value("1e3 Hz", Unit::Hertz).unwrap(), 1e3));
        assert!(close(
            parse_value("2.5E-3 s", Unit::Second).unwrap(),
            2.5e-3
        ));
        assert!(close(
            parse_value("-40 degC", Unit::DegreeCelsius).unwrap(),
            -40.0
        ));
        assert!(close(parse_value("100 mHz", Unit::Hertz).unwrap(), 0.1));
        assert!(close(parse_value("10 kVA", Unit::VoltAmpere).unwrap(), 1e4));
    }

    #[test]
    fn rejects_wrong_dimension_and_missing_units() {
        assert_eq!(
            parse_value("3.2 mV", Unit::Henry),
            Err(UnitError::WrongDimension {
                expected: Unit::Henry,
                found: Unit::Volt
            })
        );
        assert_eq!(
            parse_value("3.2 mV", Unit::Henry).unwrap_err().to_string(),
            "expected an inductance (H), got a voltage"
        );
        assert_eq!(
            parse_value("400", Unit::Volt),
            Err(UnitError::MissingUnit {
                expected: Unit::Volt
            })
        );
        assert_eq!(parse_value("volts", Unit::Volt), Err(UnitError::NotANumber));
        assert!(matches!(
            parse_value("3 furlongs", Unit::Volt),
            Err(UnitError::UnknownUnit { .. })
        ));
        // A prefix on a unit that takes none is not a unit.
        assert!(matches!(
            parse_value("3 k%", Unit::Percent),
            Err(UnitError::UnknownUnit { .. })
        ));
        assert!(matches!(
            parse_value("3 xV", Unit::Volt),
            Err(UnitError::UnknownUnit { .. })
        ));
    }

    #[test]
    fn prints_with_engineering_prefixes() {
        assert_eq!(format_value(1186.27, Unit::Hertz), "1.186 kHz");
        assert_eq!(format_value(22.1e-6, Unit::Farad), "22.1 µF");
        assert_eq!(format_value(3.183e-3, Unit::Henry), "3.183 mH");
        assert_eq!(format_value(400.0, Unit::Volt), "400 V");
        assert_eq!(format_value(0.05, Unit::Percent), "5 %");
        assert_eq!(format_value(0.904_312, Unit::One), "0.9043");
        assert_eq!(format_value(13.416, Unit::Ohm), "13.42 Ω");
        assert_eq!(format_value(0.0, Unit::Volt), "0 V");
        assert_eq!(format_value(-1.5e-3, Unit::Ampere), "-1.5 mA");
        assert_eq!(
            format_value(std::f64::consts::FRAC_PI_2, Unit::Degree),
            "90°"
        );
        assert_eq!(format_value(999.99999, Unit::Volt), "1 kV");
        assert_eq!(format_value(45.0, Unit::DegreeCelsius), "45 °C");
    }

    #[test]
    fn thermal_resistance_and_hours() {
        // 1 K/W = 1 °C/W (a temperature difference per watt; SI brochure, kelvin and
        // degree Celsius intervals are equal); an hour is 3600 s (SI brochure, Table 8).
        assert_eq!(parse_value("0.35 K/W", Unit::KelvinPerWatt), Ok(0.35));
        assert_eq!(parse_value("0.35 °C/W", Unit::KelvinPerWatt), Ok(0.35));
        assert_eq!(parse_value("5000 h", Unit::Hour), Ok(5000.0 * 3600.0));
        assert_eq!(format_value(5000.0 * 3600.0, Unit::Hour), "5000 h");
        assert!(
            parse_value("5 kh", Unit::Hour).is_err(),
            "hours take no prefix"
        );
        assert!(
            parse_value("25 mohm", Unit::Ohm).is_ok(),
            "ohm still wins over h"
        );
        assert_eq!(Unit::from_code("K/W"), Unit::KelvinPerWatt);
        assert_eq!(Unit::from_code("degC"), Unit::DegreeCelsius);
    }

    #[test]
    fn print_then_parse_round_trips() {
        let cases = [
            (1.8e-3, Unit::Henry),
            (10e-6, Unit::Farad),
            (20e3, Unit::Hertz),
            (2200.0, Unit::Watt),
            (0.123_4, Unit::Percent),
            (47e-9, Unit::Farad),
            (4.7e6, Unit::Ohm),
            (-25.0, Unit::DegreeCelsius),
            (0.35, Unit::KelvinPerWatt),
            (5000.0 * 3600.0, Unit::Hour),
            (-0.0045, Unit::PercentPerKelvin),
        ];
        for (value, unit) in cases {
            let text = format_value(value, unit);
            let back = parse_value(&text, unit).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert!(
                (back - value).abs() <= 1e-3 * value.abs(),
                "{value} -> {text} -> {back}"
            );
        }
    }

    #[test]
    fn number_formatting_extremes() {
        assert_eq!(format_number(1.23456e-7, 4), "1.235e-7");
        assert_eq!(format_number(123_456.0, 4), "123456");
        assert_eq!(format_number(f64::NAN, 4), "NaN");
        assert_eq!(format_number(-0.00001, 2), "-1e-5");
    }
}
