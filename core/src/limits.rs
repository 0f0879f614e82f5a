//! One validation layer: the physically sensible range of every kind of quantity a design, a study
//! or a page field may hold. Every topology, study and field checks its numbers here, so a value
//! that one part of Hysteron refuses is refused everywhere, and nothing huge, tiny or non-finite
//! reaches the math.
//!
//! The ranges are wide on purpose (common practice: well beyond any part a bench would fit, yet far
//! inside the range where the network equations stay finite in double precision).

use crate::error::DesignError;
use crate::notation::{format_with_unit, Unit};

/// A kind of physical quantity with its own sensible range.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// A resistor or any resistance, ohms: 1 µΩ to 1 PΩ (wide enough for a shunt's fraction and a
    /// leakage path, and for the search's anchor sweeps; every network equation stays finite).
    Resistance,
    /// A voltage (supply, rail, reference, threshold, level, offset, signal), volts: ±100 kV.
    Voltage,
    /// A current (bias, budget, load), amperes: ±100 A.
    Current,
    /// A capacitance, farads: 1 fF to 1 F.
    Capacitance,
    /// An absolute temperature, kelvin: 1 K to 1000 K.
    Temperature,
    /// A frequency, hertz: 1 µHz to 10 GHz.
    Frequency,
    /// A duration or time step, seconds: 0 to 10⁷ s (about four months).
    Duration,
    /// A dimensionless gain or ratio (current gain, derating factor): 0.001 to 10⁶.
    Gain,
    /// A transistor saturation current IS, amperes: 10⁻³⁰ A to 1 mA.
    SaturationCurrent,
    /// A percentage (tolerance, yield target): 0 % to 100 %.
    Percent,
    /// A semiconductor junction temperature, kelvin: 150 K to 500 K (about −120 °C to 225 °C;
    /// common practice: beyond every silicon part's rating, and the range where the saturation
    /// current's temperature law keeps IS inside [`Quantity::SaturationCurrent`]).
    JunctionTemperature,
    /// A bandgap voltage EG/q, volts: 0.1 V to 5 V (germanium 0.67 V, silicon 1.11 V, wide-bandgap
    /// parts about 3.3 V; common practice).
    Bandgap,
    /// A dimensionless temperature exponent (SPICE's XTI, XTB): −10 to 10.
    Exponent,
    /// A voltage temperature coefficient (offset drift, threshold coefficient), volts per kelvin:
    /// ±0.1 V/K (far beyond any device: offset drift is µV/K, a gate threshold a few mV/K).
    VoltageDrift,
    /// A relative temperature coefficient of a device quantity (bias current), percent per
    /// kelvin: ±50 %/K (CMOS bias current doubles every 10 K, about 7 %/K — common practice).
    RelativeDrift,
    /// A resistor temperature coefficient (TCR) or tracking figure, ppm per kelvin: 0 to 10⁵
    /// (thick-film chips 100–200 ppm/K, networks track to a few ppm/K — common practice).
    Tempco,
    /// An output slew rate, volts per microsecond: 10⁻⁶ to 10⁵ V/µs (micropower comparators slew
    /// about 0.01 V/µs, fast ones thousands — common practice).
    SlewRate,
    /// A signal slope, volts per second: ±10¹² V/s (1 kV/ns; beyond any input this circuit sees).
    Slope,
}

impl Quantity {
    /// The inclusive range (min, max) in base units.
    #[inline]
    pub fn range(self) -> (f64, f64) {
        match self {
            Quantity::Resistance => (1e-6, 1e15),
            Quantity::Voltage => (-1e5, 1e5),
            Quantity::Current => (-100.0, 100.0),
            Quantity::Capacitance => (1e-15, 1.0),
            Quantity::Temperature => (1.0, 1000.0),
            Quantity::Frequency => (1e-6, 1e10),
            Quantity::Duration => (0.0, 1e7),
            Quantity::Gain => (1e-3, 1e6),
            Quantity::SaturationCurrent => (1e-30, 1e-3),
            Quantity::Percent => (0.0, 100.0),
            Quantity::JunctionTemperature => (150.0, 500.0),
            Quantity::Bandgap => (0.1, 5.0),
            Quantity::Exponent => (-10.0, 10.0),
            Quantity::VoltageDrift => (-0.1, 0.1),
            Quantity::RelativeDrift => (-50.0, 50.0),
            Quantity::Tempco => (0.0, 1e5),
            Quantity::SlewRate => (1e-6, 1e5),
            Quantity::Slope => (-1e12, 1e12),
        }
    }

    /// The unit a value of this quantity is written in, `None` for dimensionless quantities.
    pub fn unit(self) -> Option<Unit> {
        match self {
            Quantity::Resistance => Some(Unit::Ohm),
            Quantity::Voltage | Quantity::Bandgap => Some(Unit::Volt),
            Quantity::Current | Quantity::SaturationCurrent => Some(Unit::Ampere),
            Quantity::Capacitance => Some(Unit::Farad),
            Quantity::Frequency => Some(Unit::Hertz),
            Quantity::Duration => Some(Unit::Second),
            Quantity::Temperature
            | Quantity::JunctionTemperature
            | Quantity::Gain
            | Quantity::Percent
            | Quantity::Exponent
            | Quantity::VoltageDrift
            | Quantity::RelativeDrift
            | Quantity::Tempco
            | Quantity::SlewRate
            | Quantity::Slope => None,
        }
    }

    fn write(self, value: f64) -> String {
        match (self, self.unit()) {
            (Quantity::Temperature | Quantity::JunctionTemperature, _) => format!("{value} K"),
            (Quantity::Percent, _) => format!("{value} %"),
            (Quantity::VoltageDrift, _) => format!("{} µV/K", value * 1e6),
            (Quantity::RelativeDrift, _) => format!("{value} %/K"),
            (Quantity::Tempco, _) => format!("{value} ppm/K"),
            (Quantity::SlewRate, _) => format!("{value} V/µs"),
            (Quantity::Slope, _) => format!("{value} V/s"),
            (_, Some(u)) => format_with_unit(value, 3, u),
            (_, None) => format!("{value}"),
        }
    }

    /// Whether `value` is finite and inside [`Quantity::range`].
    #[inline]
    pub fn admits(self, value: f64) -> bool {
        let (lo, hi) = self.range();
        value.is_finite() && (lo..=hi).contains(&value)
    }
}

/// Why `value` is not admitted, in words for the place where it was typed ("must be between 1 µΩ
/// and …"), or `None` when it is admitted.
pub fn refusal(quantity: Quantity, value: f64) -> Option<String> {
    if quantity.admits(value) {
        return None;
    }
    Some(refusal_words(quantity, value))
}

/// The words of a refusal (kept out of line: checks run per Monte Carlo trial and per search
/// candidate, and the admitted path must stay a comparison).
#[cold]
#[inline(never)]
fn refusal_words(quantity: Quantity, value: f64) -> String {
    let (lo, hi) = quantity.range();
    let got = if value.is_finite() { quantity.write(value) } else { "not a number".to_string() };
    format!("must be between {} and {} (got {got})", quantity.write(lo), quantity.write(hi))
}

/// Checks one value: finite and inside its quantity's range. The error names `field` and the range.
#[inline]
pub fn check(quantity: Quantity, field: &str, value: f64) -> Result<f64, DesignError> {
    if quantity.admits(value) {
        Ok(value)
    } else {
        Err(refused(quantity, field, value))
    }
}

#[cold]
#[inline(never)]
fn refused(quantity: Quantity, field: &str, value: f64) -> DesignError {
    DesignError::invalid(field, refusal_words(quantity, value))
}

/// The quantity a page field holds, from the unit symbol written beside it (`Ω`, `V`, `A`, `F`,
/// `Hz`, `s`, `K`, `%`); `None` for symbols with no range of their own (dimensionless, `°C`,
/// `ppm/K`), which their study checks instead.
pub fn for_unit_symbol(symbol: &str) -> Option<Quantity> {
    match symbol {
        "Ω" => Some(Quantity::Resistance),
        "V" => Some(Quantity::Voltage),
        "A" => Some(Quantity::Current),
        "F" => Some(Quantity::Capacitance),
        "Hz" => Some(Quantity::Frequency),
        "s" => Some(Quantity::Duration),
        "K" => Some(Quantity::Temperature),
        "%" => Some(Quantity::Percent),
        _ => None,
    }
}

/// Checks an optional value (a part that may be left out).
pub fn check_optional(quantity: Quantity, field: &str, value: Option<f64>) -> Result<Option<f64>, DesignError> {
    value.map(|v| check(quantity, field, v)).transpose()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_non_finite_and_out_of_range_values() {
        assert!(check(Quantity::Resistance, "r1_ohm", f64::NAN).is_err());
        assert!(check(Quantity::Resistance, "r1_ohm", 5e-324).is_err());
        assert!(check(Quantity::Voltage, "supply_v", 1e300).is_err());
        assert!(check(Quantity::Current, "bias_plus_a", 1e308).is_err());
        assert_eq!(check(Quantity::Resistance, "r1_ohm", 4.7e3), Ok(4.7e3));
        assert_eq!(check(Quantity::Voltage, "negative_rail_v", -12.0), Ok(-12.0));
    }

    #[test]
    fn page_fields_find_their_quantity_by_unit_symbol() {
        assert_eq!(for_unit_symbol("V"), Some(Quantity::Voltage));
        assert_eq!(for_unit_symbol("Ω"), Some(Quantity::Resistance));
        assert_eq!(for_unit_symbol("°C"), None);
        assert!(refusal(Quantity::Voltage, 1e300).unwrap().starts_with("must be between"));
        assert_eq!(refusal(Quantity::Voltage, 5.0), None);
    }

    #[test]
    fn message_names_the_field_and_the_range() {
        let e = check(Quantity::Resistance, "r1_ohm", -1.0).unwrap_err().to_string();
        assert!(e.starts_with("r1_ohm: must be between"), "{e}");
        assert!(e.contains("1 µΩ") && e.contains("got -1 Ω"), "{e}");
    }
}
