//! Quantities with units: "4 mil", "0.1 mm", "1 oz", "28 GHz", "56 Gbps", "5 %".
//!
//! Everything becomes SI `f64` here; nothing downstream sees a unit string.

use std::fmt;

/// The physical dimension a field expects.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dimension {
    /// Metres. Units: m, mm, um/µm, nm, mil, thou, in/inch, cm.
    Length,
    /// Copper thickness: a length, or a weight in oz (per ft²).
    CopperThickness,
    /// Hertz. Units: Hz, kHz, MHz, GHz, THz.
    Frequency,
    /// Bits per second. Units: bps, kbps, Mbps, Gbps, Tbps (also b/s forms).
    DataRate,
    /// Seconds. Units: s, ms, us, ns, ps, fs.
    Time,
    /// Ohms. Units: ohm, Ω, mohm, kohm. Bare numbers are ohms.
    Impedance,
    /// A fraction 0..1. Units: % (bare numbers are fractions).
    Fraction,
    /// Surface roughness, a length (um by convention but the unit is required).
    Roughness,
    /// A loss in decibels. Units: dB.
    Loss,
}

impl Dimension {
    pub fn describe(self) -> &'static str {
        match self {
            Dimension::Length | Dimension::Roughness => "a length (mm, um, mil, in, m)",
            Dimension::CopperThickness => "a copper thickness (um, mil, mm) or weight (oz)",
            Dimension::Frequency => "a frequency (Hz, kHz, MHz, GHz)",
            Dimension::DataRate => "a data rate (bps, Mbps, Gbps)",
            Dimension::Time => "a time (s, ns, ps, fs)",
            Dimension::Impedance => "an impedance (ohm)",
            Dimension::Fraction => "a fraction (0 to 1) or a percentage (%)",
            Dimension::Loss => "a loss in dB",
        }
    }

    /// Whether a bare number (no unit) is accepted, and in which unit.
    pub fn bare_unit(self) -> Option<&'static str> {
        match self {
            Dimension::Impedance => Some("ohm"),
            Dimension::Fraction => Some("fraction"),
            _ => None,
        }
    }
}

/// Copper thickness of one ounce per square foot, in metres.
///
/// See [`stackup_physics::consts::OUNCE_COPPER_THICKNESS`].
pub fn ounce_thickness() -> f64 {
    stackup_physics::consts::OUNCE_COPPER_THICKNESS
}

/// What went wrong reading a quantity.
#[derive(Debug, Clone, PartialEq)]
pub enum UnitError {
    Empty,
    NotANumber(String),
    NotFinite,
    UnknownUnit { unit: String, expected: Dimension },
    WrongDimension { unit: String, expected: Dimension },
    MissingUnit { expected: Dimension },
}

impl fmt::Display for UnitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            UnitError::Empty => write!(f, "the value is empty"),
            UnitError::NotANumber(s) => write!(f, "`{s}` does not start with a number"),
            UnitError::NotFinite => write!(f, "the number is not finite (NaN or infinity)"),
            UnitError::UnknownUnit { unit, expected } => {
                write!(f, "unknown unit `{unit}`; expected {}", expected.describe())
            }
            UnitError::WrongDimension { unit, expected } => {
                write!(f, "`{unit}` is not a unit of {}", expected.describe())
            }
            UnitError::MissingUnit { expected } => write!(
                f,
                "a bare number is ambiguous here; write it with a unit, as {}",
                expected.describe()
            ),
        }
    }
}

/// Every unit read: its spellings, its scale factor to SI and its
/// dimension family.
const UNITS: &[(&[&str], f64, Family)] = {
    use Family::*;
    &[
        (&["m"], 1.0, Len),
        (&["cm"], 1e-2, Len),
        (&["mm"], 1e-3, Len),
        (&["um", "µm", "μm", "micron", "microns"], 1e-6, Len),
        (&["nm"], 1e-9, Len),
        (&["mil", "mils", "thou"], 25.4e-6, Len),
        (&["in", "inch", "inches"], 25.4e-3, Len),
        (&["oz", "oz/ft2", "oz/ft²"], OUNCE, Weight),
        (&["Hz", "hz"], 1.0, Freq),
        (&["kHz", "khz"], 1e3, Freq),
        (&["MHz", "mhz"], 1e6, Freq),
        (&["GHz", "ghz"], 1e9, Freq),
        (&["THz", "thz"], 1e12, Freq),
        (&["bps", "b/s"], 1.0, Rate),
        (&["kbps", "kb/s"], 1e3, Rate),
        (&["Mbps", "Mb/s"], 1e6, Rate),
        (&["Gbps", "Gb/s"], 1e9, Rate),
        (&["Tbps", "Tb/s"], 1e12, Rate),
        (&["s"], 1.0, Time),
        (&["ms"], 1e-3, Time),
        (&["us", "µs", "μs"], 1e-6, Time),
        (&["ns"], 1e-9, Time),
        (&["ps"], 1e-12, Time),
        (&["fs"], 1e-15, Time),
        (&["ohm", "ohms", "Ohm", "Ω"], 1.0, Ohm),
        (&["mohm", "mΩ"], 1e-3, Ohm),
        (&["kohm", "kΩ"], 1e3, Ohm),
        (&["%"], 1e-2, Frac),
        (&["dB", "db"], 1.0, Db),
    ]
};

/// One ounce of copper per square foot as a thickness, m (a constant
/// here; [`ounce_thickness`] is the same number).
const OUNCE: f64 = stackup_physics::consts::OUNCE_COPPER_THICKNESS;

/// Unit words people write for one of ours, too far apart for the edit
/// distance: the written word and the spelling it means.
const UNIT_ALIASES: &[(&str, &str)] = &[
    ("micrometer", "um"),
    ("micrometers", "um"),
    ("micrometre", "um"),
    ("micrometres", "um"),
    ("millimeter", "mm"),
    ("millimeters", "mm"),
    ("millimetre", "mm"),
    ("millimetres", "mm"),
    ("ounce", "oz"),
    ("ounces", "oz"),
    ("Gbit/s", "Gbps"),
    ("Mbit/s", "Mbps"),
    ("ohm/sq", "ohm"),
];

/// Scale factor to SI for a unit, and its dimension family.
fn unit_scale(unit: &str) -> Option<(f64, Family)> {
    let u = unit.trim();
    UNITS
        .iter()
        .find(|(names, _, _)| names.contains(&u))
        .map(|&(_, scale, fam)| (scale, fam))
}

/// Whether `unit` is one of ours that a field of `dim` accepts.
pub fn unit_is(unit: &str, dim: Dimension) -> bool {
    unit_scale(unit).is_some_and(|(_, fam)| accepts(dim, fam))
}

/// The unit of `dim` that a misspelt unit most likely means (see
/// [`crate::suggest`]), as it should be written.
pub fn suggest_unit(unit: &str, dim: Dimension) -> Option<&'static str> {
    let accepted = |name: &str| unit_is(name, dim);
    if let Some((_, meant)) = UNIT_ALIASES.iter().find(|(alias, _)| *alias == unit) {
        return accepted(meant).then_some(*meant);
    }
    let candidates = UNITS
        .iter()
        .enumerate()
        .filter(|(_, &(_, _, fam))| accepts(dim, fam))
        .flat_map(|(meaning, (names, _, _))| {
            names
                .iter()
                .map(move |&spelling| crate::suggest::Candidate { spelling, meaning })
        });
    crate::suggest::closest_meaning(unit, candidates)
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Family {
    Len,
    Weight,
    Freq,
    Rate,
    Time,
    Ohm,
    Frac,
    Db,
}

fn accepts(dim: Dimension, fam: Family) -> bool {
    matches!(
        (dim, fam),
        (Dimension::Length, Family::Len)
            | (Dimension::Roughness, Family::Len)
            | (Dimension::CopperThickness, Family::Len)
            | (Dimension::CopperThickness, Family::Weight)
            | (Dimension::Frequency, Family::Freq)
            | (Dimension::DataRate, Family::Rate)
            | (Dimension::Time, Family::Time)
            | (Dimension::Impedance, Family::Ohm)
            | (Dimension::Fraction, Family::Frac)
            | (Dimension::Loss, Family::Db)
    )
}

/// Split "12.5 GHz" into (12.5, "GHz"). The unit may follow without a space.
fn split_number(text: &str) -> Result<(f64, &str), UnitError> {
    let t = text.trim();
    if t.is_empty() {
        return Err(UnitError::Empty);
    }
    let end = t
        .char_indices()
        .find(|&(i, c)| {
            !(c.is_ascii_digit()
                || c == '.'
                || ((c == '+' || c == '-')
                    && (i == 0 || matches!(t.as_bytes()[i - 1], b'e' | b'E')))
                || ((c == 'e' || c == 'E')
                    && i > 0
                    && t[i + 1..]
                        .chars()
                        .next()
                        .is_some_and(|n| n.is_ascii_digit() || n == '-' || n == '+')))
        })
        .map_or(t.len(), |(i, _)| i);
    let (num, rest) = t.split_at(end);
    let lower = t.to_ascii_lowercase();
    if lower.starts_with("nan") || lower.starts_with("inf") || lower.starts_with(".nan") {
        return Err(UnitError::NotFinite);
    }
    let value: f64 = num
        .parse()
        .map_err(|_| UnitError::NotANumber(t.to_string()))?;
    if !value.is_finite() {
        return Err(UnitError::NotFinite);
    }
    Ok((value, rest.trim()))
}

/// The number and unit of a quantity as written ("0.2 mm" → 0.2, "mm"),
/// with the unit's scale to SI (1 for a bare number). For edits that keep
/// the user's unit.
pub fn written_unit(text: &str) -> Option<(f64, &str, f64)> {
    let (value, unit) = split_number(text).ok()?;
    if unit.is_empty() {
        return Some((value, unit, 1.0));
    }
    let (scale, _) = unit_scale(unit)?;
    Some((value, unit, scale))
}

/// Parse a quantity given as text into SI.
pub fn parse_quantity(text: &str, dim: Dimension) -> Result<f64, UnitError> {
    let (value, unit) = split_number(text)?;
    if unit.is_empty() {
        return match dim.bare_unit() {
            Some(_) => Ok(value),
            None => Err(UnitError::MissingUnit { expected: dim }),
        };
    }
    match unit_scale(unit) {
        None => Err(UnitError::UnknownUnit {
            unit: unit.to_string(),
            expected: dim,
        }),
        Some((scale, fam)) if accepts(dim, fam) => Ok(value * scale),
        Some(_) => Err(UnitError::WrongDimension {
            unit: unit.to_string(),
            expected: dim,
        }),
    }
}

/// Parse a quantity given as a bare YAML number (only where documented).
pub fn bare_number(value: f64, dim: Dimension) -> Result<f64, UnitError> {
    if !value.is_finite() {
        return Err(UnitError::NotFinite);
    }
    match dim.bare_unit() {
        Some(_) => Ok(value),
        None => Err(UnitError::MissingUnit { expected: dim }),
    }
}

/// Format a length for messages: µm below 1 mm, else mm.
pub fn fmt_length(m: f64) -> String {
    if m.abs() < 1e-3 {
        format!("{:.1} µm", m * 1e6)
    } else {
        let t = format!("{:.3}", m * 1e3);
        let t = t.trim_end_matches('0').trim_end_matches('.');
        format!("{t} mm")
    }
}

/// Copper weights as fabricators name them, oz per ft², with how they are
/// written (common practice, no source).
const COMMON_WEIGHTS: &[(f64, &str)] = &[
    (0.25, "1/4"),
    (1.0 / 3.0, "1/3"),
    (0.5, "0.5"),
    (0.75, "0.75"),
    (1.0, "1"),
    (1.5, "1.5"),
    (2.0, "2"),
    (2.5, "2.5"),
    (3.0, "3"),
    (4.0, "4"),
    (5.0, "5"),
    (6.0, "6"),
];

/// Format a copper thickness as its weight: the common weight it is
/// within 3 % of ("1 oz", "0.5 oz"), else to two decimals ("0.52 oz").
pub fn fmt_copper_weight(m: f64) -> String {
    let oz = m / ounce_thickness();
    match COMMON_WEIGHTS
        .iter()
        .find(|(w, _)| (oz - w).abs() <= 0.03 * w)
    {
        Some((_, name)) => format!("{name} oz"),
        None => format!("{oz:.2} oz"),
    }
}

/// Format a frequency for messages.
pub fn fmt_frequency(hz: f64) -> String {
    if hz >= 1e9 {
        format!("{:.3} GHz", hz / 1e9).replace(".000 GHz", " GHz")
    } else if hz >= 1e6 {
        format!("{:.1} MHz", hz / 1e6)
    } else {
        format!("{hz:.0} Hz")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn copper_weights_print_as_common_fractions_within_3_percent() {
        let um = |x: f64| x * 1e-6;
        // 1 oz/ft² is 34.3 µm (consts::OUNCE_COPPER_THICKNESS); 35 µm is
        // the usual rounding, 2 % above.
        assert_eq!(fmt_copper_weight(ounce_thickness()), "1 oz");
        assert_eq!(fmt_copper_weight(um(35.0)), "1 oz");
        assert_eq!(fmt_copper_weight(um(17.5)), "0.5 oz");
        assert_eq!(fmt_copper_weight(um(70.0)), "2 oz");
        assert_eq!(fmt_copper_weight(um(11.6)), "1/3 oz");
        // 18 µm is 5 % above half an ounce: printed as it is.
        assert_eq!(fmt_copper_weight(um(18.0)), "0.52 oz");
        assert_eq!(fmt_copper_weight(um(40.0)), "1.17 oz");
    }

    #[test]
    fn misspelt_units_get_the_unit_of_their_dimension() {
        assert_eq!(suggest_unit("mill", Dimension::Length), Some("mil"));
        assert_eq!(suggest_unit("millimetres", Dimension::Length), Some("mm"));
        assert_eq!(suggest_unit("Ghz", Dimension::Frequency), Some("GHz"));
        assert_eq!(suggest_unit("Gbit/s", Dimension::DataRate), Some("Gbps"));
        // An ounce is a copper weight, not a length.
        assert_eq!(
            suggest_unit("ounce", Dimension::CopperThickness),
            Some("oz")
        );
        assert_eq!(suggest_unit("ounce", Dimension::Length), None);
        // `umm` is one edit from `um` and from `mm`: no guess.
        assert_eq!(suggest_unit("umm", Dimension::Length), None);
        assert_eq!(suggest_unit("furlong", Dimension::Length), None);
        // Every spelling in the table is read.
        for &(names, scale, _) in UNITS {
            for name in names {
                assert_eq!(unit_scale(name).map(|(s, _)| s), Some(scale));
            }
        }
    }

    #[test]
    fn lengths() {
        // 1 mil = 25.4 µm exactly (definition of the inch, NIST SP 811).
        assert!((parse_quantity("4 mil", Dimension::Length).unwrap() - 101.6e-6).abs() < 1e-15);
        assert!((parse_quantity("0.1 mm", Dimension::Length).unwrap() - 1e-4).abs() < 1e-15);
        assert!((parse_quantity("101.6 um", Dimension::Length).unwrap() - 101.6e-6).abs() < 1e-15);
        assert!((parse_quantity("101.6µm", Dimension::Length).unwrap() - 101.6e-6).abs() < 1e-15);
        assert!((parse_quantity("1e-3 m", Dimension::Length).unwrap() - 1e-3).abs() < 1e-15);
    }

    #[test]
    fn other_dimensions() {
        assert_eq!(
            parse_quantity("28 GHz", Dimension::Frequency).unwrap(),
            28e9
        );
        assert_eq!(
            parse_quantity("56 Gbps", Dimension::DataRate).unwrap(),
            56e9
        );
        assert!((parse_quantity("5 %", Dimension::Fraction).unwrap() - 0.05).abs() < 1e-15);
        assert_eq!(parse_quantity("0.3", Dimension::Fraction).unwrap(), 0.3);
        assert_eq!(parse_quantity("50", Dimension::Impedance).unwrap(), 50.0);
        assert_eq!(
            parse_quantity("85 ohm", Dimension::Impedance).unwrap(),
            85.0
        );
        assert_eq!(parse_quantity("5 ps", Dimension::Time).unwrap(), 5e-12);
        let oz = parse_quantity("1 oz", Dimension::CopperThickness).unwrap();
        assert!((oz - 34.3e-6).abs() < 0.3e-6, "{oz}");
    }

    #[test]
    fn errors() {
        assert!(matches!(
            parse_quantity("4 furlong", Dimension::Length),
            Err(UnitError::UnknownUnit { .. })
        ));
        assert!(matches!(
            parse_quantity("4 GHz", Dimension::Length),
            Err(UnitError::WrongDimension { .. })
        ));
        assert!(matches!(
            parse_quantity("1 oz", Dimension::Length),
            Err(UnitError::WrongDimension { .. })
        ));
        assert!(matches!(
            parse_quantity("4", Dimension::Length),
            Err(UnitError::MissingUnit { .. })
        ));
        assert!(matches!(
            parse_quantity("NaN mm", Dimension::Length),
            Err(UnitError::NotFinite)
        ));
        assert!(matches!(
            parse_quantity("mm", Dimension::Length),
            Err(UnitError::NotANumber(_))
        ));
        assert!(matches!(
            parse_quantity("", Dimension::Length),
            Err(UnitError::Empty)
        ));
        assert!(matches!(
            parse_quantity("1e999 mm", Dimension::Length),
            Err(UnitError::NotFinite)
        ));
    }
}
