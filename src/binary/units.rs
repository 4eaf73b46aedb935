//! Constants and numbers with units written on them (`1.4msun`, `7.75 h`, `6.4kpc`, `100Hz`).
//!
//! Every constant of the binary calculator is here, with its source:
//! - `C`: the speed of light, exact by the SI definition of the metre;
//! - `G`: the Newtonian constant of gravitation, CODATA recommended value
//!   6.674 30(15) x 10^-11 m^3 kg^-1 s^-2 (CODATA 2018; CODATA 2022 kept it, from memory).
//!   It enters only where a mass in kilograms is unavoidable: the luminosity in watts
//!   (c^5/G) and the reduced mass in kilograms; its relative uncertainty is 2.2e-5;
//! - `GM_SUN`: the IAU 2015 Resolution B3 nominal solar mass parameter, 1.327 124 4 x 10^20
//!   m^3 s^-2 (exact by definition). Masses are carried as G m (m^3/s^2), so every orbital
//!   quantity is as precise as this number, not limited by G;
//! - `AU`: the astronomical unit, 149 597 870 700 m (IAU 2012 Resolution B2, exact);
//! - `PARSEC`: (648 000 / pi) au (IAU 2015 Resolution B2), never au cot(1");
//! - `JULIAN_YEAR`: 365.25 d = 31 557 600 s.
//!
//! A number is an exact decimal or scientific literal (`7.75`, `1e9`, `-0.5`, `.3E-2`),
//! followed by an optional unit, with or without a space. A bare number is in the first unit
//! of its kind's list (msun, s, m, Hz).

use std::f64::consts::PI;

/// The speed of light, m/s (exact, SI).
pub const C: f64 = 299_792_458.0;
/// The Newtonian constant of gravitation, m^3 kg^-1 s^-2 (CODATA recommended value).
pub const G: f64 = 6.674_30e-11;
/// The nominal solar mass parameter G M_sun, m^3/s^2 (IAU 2015 Resolution B3, exact).
pub const GM_SUN: f64 = 1.327_124_4e20;
/// The astronomical unit, m (IAU 2012 Resolution B2, exact).
pub const AU: f64 = 149_597_870_700.0;
/// The parsec, m: (648 000 / pi) au (IAU 2015 Resolution B2).
pub const PARSEC: f64 = 648_000.0 / PI * AU;
/// The Julian year, s.
pub const JULIAN_YEAR: f64 = 31_557_600.0;
/// The day, s.
pub const DAY: f64 = 86_400.0;
/// The hour, s.
pub const HOUR: f64 = 3_600.0;

/// What a number measures, and so which units it may carry.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    /// A mass, in solar masses (carried as G m).
    Mass,
    /// A time.
    Time,
    /// A length.
    Length,
    /// A frequency.
    Frequency,
}

impl Kind {
    /// The units of this kind with their factor to SI (solar masses: to G m in m^3/s^2); the
    /// first is the unit of a bare number.
    #[must_use]
    pub fn units(self) -> &'static [(&'static str, f64)] {
        match self {
            Kind::Mass => &[("msun", GM_SUN)],
            Kind::Time => &[("s", 1.0), ("h", HOUR), ("d", DAY), ("yr", JULIAN_YEAR)],
            Kind::Length => &[
                ("m", 1.0),
                ("km", 1e3),
                ("AU", AU),
                ("pc", PARSEC),
                ("kpc", 1e3 * PARSEC),
                ("Mpc", 1e6 * PARSEC),
                ("Gpc", 1e9 * PARSEC),
            ],
            Kind::Frequency => &[("Hz", 1.0), ("mHz", 1e-3), ("kHz", 1e3)],
        }
    }

    /// The known units, comma-separated, for messages.
    #[must_use]
    pub fn unit_list(self) -> String {
        self.units()
            .iter()
            .map(|(u, _)| *u)
            .collect::<Vec<_>>()
            .join(", ")
    }
}

/// Why a number with a unit could not be read.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum UnitError {
    /// Nothing that starts like a number.
    #[error("`{0}` is not a number: write a decimal or scientific number, e.g. 1.4 or 2.5e9")]
    NotANumber(String),
    /// A number whose magnitude is beyond double precision.
    #[error("`{0}` is beyond the range of double precision")]
    OutOfRange(String),
    /// A unit this kind of quantity does not know.
    #[error("unknown unit `{unit}`; known units: {known}")]
    UnknownUnit {
        /// The unit as written.
        unit: String,
        /// The known units of the kind.
        known: String,
    },
}

/// The length of the leading decimal or scientific literal of `s` (0 if none).
fn literal_len(s: &str) -> usize {
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let int_start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    let mut digits = i - int_start;
    if i < b.len() && b[i] == b'.' {
        let frac_start = i + 1;
        let mut j = frac_start;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        digits += j - frac_start;
        if digits > 0 {
            i = j;
        }
    }
    if digits == 0 {
        return 0;
    }
    // An exponent only if digits follow it (`1e9`, `2E-3`); otherwise `e` starts a unit.
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        let exp_start = j;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        if j > exp_start {
            i = j;
        }
    }
    i
}

/// A number without a unit (an eccentricity).
///
/// # Errors
///
/// Not a number, or anything after it.
pub fn parse_number(text: &str) -> Result<f64, UnitError> {
    let t = text.trim();
    let n = literal_len(t);
    if n == 0 || n != t.len() {
        return Err(UnitError::NotANumber(t.to_string()));
    }
    t.parse()
        .ok()
        .filter(|v: &f64| v.is_finite())
        .ok_or_else(|| UnitError::OutOfRange(t.to_string()))
}

/// A number with an optional unit of `kind`, in SI (masses: G m in m^3/s^2), and the unit as
/// written (the default unit for a bare number).
///
/// # Errors
///
/// Not a number, out of double range, or a unit `kind` does not know.
pub fn parse_quantity(text: &str, kind: Kind) -> Result<(f64, &'static str), UnitError> {
    let t = text.trim();
    let n = literal_len(t);
    if n == 0 {
        return Err(UnitError::NotANumber(t.to_string()));
    }
    let value: f64 = t[..n]
        .parse()
        .map_err(|_| UnitError::NotANumber(t.to_string()))?;
    if !value.is_finite() {
        return Err(UnitError::OutOfRange(t[..n].to_string()));
    }
    let unit = t[n..].trim();
    let units = kind.units();
    let (name, factor) = if unit.is_empty() {
        units[0]
    } else {
        // `au` for `AU` is the only spelling tolerated besides the listed ones.
        let wanted = if unit == "au" { "AU" } else { unit };
        *units
            .iter()
            .find(|(u, _)| *u == wanted)
            .ok_or_else(|| UnitError::UnknownUnit {
                unit: unit.to_string(),
                known: kind.unit_list(),
            })?
    };
    let si = value * factor;
    if !si.is_finite() || (value != 0.0 && si == 0.0) {
        return Err(UnitError::OutOfRange(t.to_string()));
    }
    Ok((si, name))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_with_and_without_units() {
        assert_eq!(
            parse_quantity("1.4msun", Kind::Mass),
            Ok((1.4 * GM_SUN, "msun"))
        );
        assert_eq!(
            parse_quantity("1.4 msun", Kind::Mass),
            Ok((1.4 * GM_SUN, "msun"))
        );
        assert_eq!(
            parse_quantity("1.4", Kind::Mass),
            Ok((1.4 * GM_SUN, "msun"))
        );
        assert_eq!(
            parse_quantity("7.75h", Kind::Time),
            Ok((7.75 * 3600.0, "h"))
        );
        assert_eq!(parse_quantity("2e9", Kind::Length), Ok((2e9, "m")));
        assert_eq!(parse_quantity("1e3 km", Kind::Length), Ok((1e6, "km")));
        assert_eq!(parse_quantity("1au", Kind::Length), Ok((AU, "AU")));
        assert_eq!(parse_quantity("-.5E1Hz", Kind::Frequency), Ok((-5.0, "Hz")));
        assert_eq!(parse_quantity("100mHz", Kind::Frequency), Ok((0.1, "mHz")));
        // `e` without digits after it is no exponent.
        assert!(matches!(
            parse_quantity("3e", Kind::Time),
            Err(UnitError::UnknownUnit { .. })
        ));
        for bad in ["", "msun", "inf", "NaN", ".", "-", "infinity"] {
            assert!(
                matches!(
                    parse_quantity(bad, Kind::Mass),
                    Err(UnitError::NotANumber(_))
                ),
                "{bad}"
            );
        }
        // `0x10` is 0 followed by the unknown unit `x10`.
        assert!(matches!(
            parse_quantity("0x10", Kind::Mass),
            Err(UnitError::UnknownUnit { .. })
        ));
        assert!(matches!(
            parse_quantity("1e999", Kind::Time),
            Err(UnitError::OutOfRange(_))
        ));
        assert!(matches!(
            parse_quantity("1e308 Gpc", Kind::Length),
            Err(UnitError::OutOfRange(_))
        ));
        let e = parse_quantity("3 furlongs", Kind::Length).unwrap_err();
        assert_eq!(
            e.to_string(),
            "unknown unit `furlongs`; known units: m, km, AU, pc, kpc, Mpc, Gpc"
        );
        assert_eq!(parse_number(" 0.617 "), Ok(0.617));
        assert!(parse_number("0.6x").is_err() && parse_number("1e400").is_err());
        // A unit of another kind is unknown here.
        assert!(parse_quantity("3kpc", Kind::Time).is_err());
    }

    /// checks.md section 8 (IAU 2012 B2, IAU 2015 B2/B3; [CALC] values there).
    #[test]
    fn constants_match_the_check_sheet() {
        // pc/au = 206264.80624709636 (rel 1e-15), checks.md 8.
        assert!((PARSEC / AU / 206_264.806_247_096_36 - 1.0).abs() < 1e-15);
        // 1 Mpc = 3.0856775814913673e22 m, checks.md 8.
        assert!((1e6 * PARSEC / 3.085_677_581_491_367e22 - 1.0).abs() < 1e-15);
        // T_sun = GM_sun/c^3 = 4.925490947641e-6 s (rel 1e-12), checks.md 8.
        assert!((GM_SUN / C.powi(3) / 4.925_490_947_641e-6 - 1.0).abs() < 1e-12);
        // GM_sun/c^2 = 1476.625038 m, checks.md 8.
        assert!((GM_SUN / (C * C) / 1_476.625_038 - 1.0).abs() < 1e-9);
        // M_sun = GM_sun/G = 1.98841e30 kg (limited by G), checks.md 8.
        assert!((GM_SUN / G / 1.988_41e30 - 1.0).abs() < 1e-5);
    }
}
