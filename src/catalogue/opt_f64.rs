//! An optional `f64` in eight bytes, for the per-object fields of a large catalogue.
//!
//! `Option<f64>` takes sixteen bytes (a tag beside the float); an accepted object has twelve
//! of them, so at 10⁶ objects the tags alone were 96 MB. [`OptF64`] keeps "missing" as one
//! reserved NaN bit pattern instead, and reads back as an `Option<f64>`:
//!
//! ```
//! use dwarfbound::catalogue::OptF64;
//! assert_eq!(std::mem::size_of::<OptF64>(), 8);
//! assert_eq!(OptF64::from(Some(0.8)).get(), Some(0.8));
//! assert_eq!(OptF64::NONE.get(), None);
//! // A stored NaN stays a value, never "missing" (vetting refuses NaN cells anyway).
//! assert!(OptF64::from(Some(f64::NAN)).get().is_some_and(f64::is_nan));
//! ```

/// The bit pattern that means "missing": a signalling NaN with an arbitrary payload that no
/// arithmetic produces (hardware makes quiet NaNs) and no parser returns.
const MISSING_BITS: u64 = 0x7ff4_d3a9_1c5e_0b17;

/// An `Option<f64>` in eight bytes: every `f64` is stored with its exact bits, except the one
/// reserved NaN pattern, which is stored as the ordinary quiet NaN — still `Some(NaN)`, so a
/// NaN can never come back as "missing". Equality, `Debug` and serialisation are those of the
/// `Option<f64>` it reads as (`Some(NaN) != Some(NaN)`, `null` for missing).
#[derive(Clone, Copy)]
pub struct OptF64(u64);

impl OptF64 {
    /// No value.
    pub const NONE: OptF64 = OptF64(MISSING_BITS);

    /// A present value (any `f64`, NaN included).
    pub const fn some(value: f64) -> OptF64 {
        let bits = value.to_bits();
        if bits == MISSING_BITS {
            OptF64(f64::NAN.to_bits())
        } else {
            OptF64(bits)
        }
    }

    /// The value, `None` when missing.
    #[inline]
    pub const fn get(self) -> Option<f64> {
        if self.0 == MISSING_BITS {
            None
        } else {
            Some(f64::from_bits(self.0))
        }
    }

    /// Whether a value is present.
    #[inline]
    pub const fn is_some(self) -> bool {
        self.0 != MISSING_BITS
    }

    /// Whether the value is missing.
    #[inline]
    pub const fn is_none(self) -> bool {
        self.0 == MISSING_BITS
    }
}

impl Default for OptF64 {
    /// Missing, as `Option::default`.
    fn default() -> Self {
        OptF64::NONE
    }
}

impl From<Option<f64>> for OptF64 {
    fn from(value: Option<f64>) -> Self {
        value.map_or(OptF64::NONE, OptF64::some)
    }
}

impl From<OptF64> for Option<f64> {
    fn from(value: OptF64) -> Self {
        value.get()
    }
}

impl PartialEq for OptF64 {
    fn eq(&self, other: &Self) -> bool {
        self.get() == other.get()
    }
}

impl PartialEq<Option<f64>> for OptF64 {
    /// Compares as the `Option<f64>` it reads as (what tests and checks write naturally).
    fn eq(&self, other: &Option<f64>) -> bool {
        self.get() == *other
    }
}

impl std::fmt::Debug for OptF64 {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        self.get().fmt(f)
    }
}

impl serde::Serialize for OptF64 {
    /// As the `Option<f64>` it reads as.
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        self.get().serialize(serializer)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_value_reads_back_as_stored() {
        // Boundary and special values (common practice, no source): zeros of both signs,
        // subnormals, extremes, infinities, the quiet NaN and NaNs with other payloads.
        let values = [
            0.0,
            -0.0,
            f64::MIN_POSITIVE,
            5e-324,
            f64::MAX,
            f64::MIN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            1.0,
            0.075,
        ];
        for v in values {
            assert_eq!(OptF64::some(v).get().map(f64::to_bits), Some(v.to_bits()));
        }
        for bits in [
            f64::NAN.to_bits(),
            0x7ff0_0000_0000_0001,
            0xfff8_0000_0000_0000,
        ] {
            let got = OptF64::some(f64::from_bits(bits)).get();
            assert_eq!(got.map(f64::to_bits), Some(bits));
        }
        assert_eq!(OptF64::NONE.get(), None);
        assert_eq!(OptF64::from(None).get(), None);
        assert!(OptF64::default().is_none());
    }

    #[test]
    fn the_reserved_pattern_stays_a_nan_value() {
        let o = OptF64::some(f64::from_bits(MISSING_BITS));
        assert!(o.is_some());
        assert!(o.get().is_some_and(f64::is_nan));
    }

    #[test]
    fn equality_debug_and_json_are_those_of_option() {
        assert_eq!(OptF64::from(Some(2.0)), OptF64::some(2.0));
        assert_ne!(OptF64::some(f64::NAN), OptF64::some(f64::NAN));
        assert_eq!(OptF64::NONE, OptF64::NONE);
        for v in [None, Some(0.1), Some(-3.5e-7)] {
            let o = OptF64::from(v);
            assert_eq!(format!("{o:?}"), format!("{v:?}"));
            assert_eq!(
                serde_json::to_string(&o).unwrap(),
                serde_json::to_string(&v).unwrap()
            );
        }
    }
}
