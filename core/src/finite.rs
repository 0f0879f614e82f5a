//! The guard that keeps NaN and ±∞ inside `core`: it walks any serialisable result (through serde,
//! so every field of every study is seen without a per-field list) and reports the path of the
//! first number that is not finite, for example
//! `tolerance.worst_case.vt_upper.max.value_v is not a finite number`.
//!
//! [`check`] turns such a finding into a [`DesignError::NotFinite`], which is how
//! [`crate::evaluate::evaluate`], the SPICE deck and the bench procedure refuse a result that would
//! otherwise print as `null`, `inf` or `NaN`.

use crate::error::DesignError;
use serde::ser::{self, Serialize};
use std::fmt;

/// Where a non-finite number was found and what it was.
#[derive(Debug, Clone, PartialEq)]
pub struct NonFinite {
    /// Dotted path from the root (`worst_case.vt_upper.max.value_v`, `readings[2].nominal_v`).
    pub path: String,
    /// The number found (NaN, +∞ or −∞).
    pub value: f64,
}

impl fmt::Display for NonFinite {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} is not a finite number (got {})", self.path, self.value)
    }
}

/// The first non-finite `f64` or `f32` in `value` (in serialisation order), or `None` when every
/// number is finite. `root` is the first segment of the reported path (a study name, or empty).
///
/// ```
/// use hysteron_core::finite::first_non_finite;
/// #[derive(serde::Serialize)]
/// struct Band { min_v: f64, max_v: Option<f64> }
/// #[derive(serde::Serialize)]
/// struct Report { bands: Vec<Band> }
/// let r = Report { bands: vec![Band { min_v: 1.0, max_v: Some(2.0) }, Band { min_v: 0.5, max_v: Some(f64::INFINITY) }] };
/// let found = first_non_finite("tolerance", &r).unwrap();
/// assert_eq!(found.path, "tolerance.bands[1].max_v");
/// assert!(first_non_finite("", &Band { min_v: 1.0, max_v: None }).is_none());
/// ```
pub fn first_non_finite<T: Serialize + ?Sized>(root: &str, value: &T) -> Option<NonFinite> {
    let mut walker = Walker { path: Vec::new() };
    if !root.is_empty() {
        walker.path.push(Segment::Key(root.to_string()));
    }
    match value.serialize(&mut walker) {
        Ok(()) => None,
        Err(Stop::Found(found)) => Some(found),
        // A type whose `Serialize` fails on its own is not a number we can judge; the JSON writer
        // would fail on it the same way.
        Err(Stop::Custom(_)) => None,
    }
}

/// `Ok(())` when every number in `value` is finite, else a [`DesignError::NotFinite`] naming the
/// path of the first one that is not (rooted at `root`, usually the study's name).
pub fn check<T: Serialize + ?Sized>(root: &str, value: &T) -> Result<(), DesignError> {
    match first_non_finite(root, value) {
        None => Ok(()),
        Some(found) => Err(DesignError::NotFinite { quantity: found.path }),
    }
}

/// Passes `value` through when it is finite everywhere; otherwise hands the error to `fail` under
/// `study` and returns `None`. The one-line form [`crate::evaluate::evaluate`] applies to each study.
pub fn keep<T: Serialize>(study: &str, value: Option<T>, fail: &mut impl FnMut(&str, DesignError)) -> Option<T> {
    let v = value?;
    match check(study, &v) {
        Ok(()) => Some(v),
        Err(e) => {
            fail(study, e);
            None
        }
    }
}

#[derive(Debug)]
enum Segment {
    Field(&'static str),
    Key(String),
    Index(usize),
}

struct Walker {
    path: Vec<Segment>,
}

impl Walker {
    fn path_text(&self) -> String {
        let mut out = String::new();
        for s in &self.path {
            match s {
                Segment::Field(name) => push_name(&mut out, name),
                Segment::Key(name) => push_name(&mut out, name),
                Segment::Index(i) => {
                    out.push('[');
                    out.push_str(&i.to_string());
                    out.push(']');
                }
            }
        }
        if out.is_empty() {
            "value".into()
        } else {
            out
        }
    }

    fn number(&mut self, v: f64) -> Result<(), Stop> {
        if v.is_finite() {
            Ok(())
        } else {
            Err(Stop::Found(NonFinite { path: self.path_text(), value: v }))
        }
    }
}

fn push_name(out: &mut String, name: &str) {
    if !out.is_empty() {
        out.push('.');
    }
    out.push_str(name);
}

/// Ends the walk: either a finding or a serialisation error of the value itself.
#[derive(Debug)]
enum Stop {
    Found(NonFinite),
    Custom(String),
}

impl fmt::Display for Stop {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Stop::Found(n) => write!(f, "{n}"),
            Stop::Custom(m) => write!(f, "{m}"),
        }
    }
}

impl std::error::Error for Stop {}

impl ser::Error for Stop {
    fn custom<T: fmt::Display>(msg: T) -> Self {
        Stop::Custom(msg.to_string())
    }
}

/// Every compound (sequence, tuple, map, struct, variant) walks its members through this.
struct Compound<'a> {
    walker: &'a mut Walker,
    index: usize,
    /// Segments pushed when the compound started (a variant name), popped when it ends.
    pushed: usize,
    pending_key: Option<String>,
}

impl Compound<'_> {
    fn element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Stop> {
        self.walker.path.push(Segment::Index(self.index));
        self.index += 1;
        value.serialize(&mut *self.walker)?;
        self.walker.path.pop();
        Ok(())
    }

    fn field<T: Serialize + ?Sized>(&mut self, key: &'static str, value: &T) -> Result<(), Stop> {
        self.walker.path.push(Segment::Field(key));
        value.serialize(&mut *self.walker)?;
        self.walker.path.pop();
        Ok(())
    }

    fn finish(self) -> Result<(), Stop> {
        for _ in 0..self.pushed {
            self.walker.path.pop();
        }
        Ok(())
    }
}

impl<'a> Walker {
    fn compound(&'a mut self, variant: Option<&'static str>) -> Compound<'a> {
        let pushed = match variant {
            Some(v) => {
                self.path.push(Segment::Field(v));
                1
            }
            None => 0,
        };
        Compound { walker: self, index: 0, pushed, pending_key: None }
    }
}

/// A map key as text for the path (keys are strings or numbers in every result type).
fn key_text<T: Serialize + ?Sized>(key: &T) -> String {
    match serde_json::to_value(key) {
        Ok(serde_json::Value::String(s)) => s,
        Ok(other) => other.to_string(),
        Err(_) => "?".into(),
    }
}

impl<'a> ser::Serializer for &'a mut Walker {
    type Ok = ();
    type Error = Stop;
    type SerializeSeq = Compound<'a>;
    type SerializeTuple = Compound<'a>;
    type SerializeTupleStruct = Compound<'a>;
    type SerializeTupleVariant = Compound<'a>;
    type SerializeMap = Compound<'a>;
    type SerializeStruct = Compound<'a>;
    type SerializeStructVariant = Compound<'a>;

    fn serialize_bool(self, _: bool) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_i8(self, _: i8) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_i16(self, _: i16) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_i32(self, _: i32) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_i64(self, _: i64) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_i128(self, _: i128) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_u8(self, _: u8) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_u16(self, _: u16) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_u32(self, _: u32) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_u64(self, _: u64) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_u128(self, _: u128) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_f32(self, v: f32) -> Result<(), Stop> {
        self.number(f64::from(v))
    }
    fn serialize_f64(self, v: f64) -> Result<(), Stop> {
        self.number(v)
    }
    fn serialize_char(self, _: char) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_str(self, _: &str) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_bytes(self, _: &[u8]) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_none(self) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_some<T: Serialize + ?Sized>(self, value: &T) -> Result<(), Stop> {
        value.serialize(self)
    }
    fn serialize_unit(self) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_unit_struct(self, _: &'static str) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_unit_variant(self, _: &'static str, _: u32, _: &'static str) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_newtype_struct<T: Serialize + ?Sized>(self, _: &'static str, value: &T) -> Result<(), Stop> {
        value.serialize(self)
    }
    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        value: &T,
    ) -> Result<(), Stop> {
        self.path.push(Segment::Field(variant));
        value.serialize(&mut *self)?;
        self.path.pop();
        Ok(())
    }
    fn serialize_seq(self, _: Option<usize>) -> Result<Compound<'a>, Stop> {
        Ok(self.compound(None))
    }
    fn serialize_tuple(self, _: usize) -> Result<Compound<'a>, Stop> {
        Ok(self.compound(None))
    }
    fn serialize_tuple_struct(self, _: &'static str, _: usize) -> Result<Compound<'a>, Stop> {
        Ok(self.compound(None))
    }
    fn serialize_tuple_variant(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        _: usize,
    ) -> Result<Compound<'a>, Stop> {
        Ok(self.compound(Some(variant)))
    }
    fn serialize_map(self, _: Option<usize>) -> Result<Compound<'a>, Stop> {
        Ok(self.compound(None))
    }
    fn serialize_struct(self, _: &'static str, _: usize) -> Result<Compound<'a>, Stop> {
        Ok(self.compound(None))
    }
    fn serialize_struct_variant(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        _: usize,
    ) -> Result<Compound<'a>, Stop> {
        Ok(self.compound(Some(variant)))
    }
}

impl ser::SerializeSeq for Compound<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Stop> {
        self.element(value)
    }
    fn end(self) -> Result<(), Stop> {
        self.finish()
    }
}

impl ser::SerializeTuple for Compound<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Stop> {
        self.element(value)
    }
    fn end(self) -> Result<(), Stop> {
        self.finish()
    }
}

impl ser::SerializeTupleStruct for Compound<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Stop> {
        self.element(value)
    }
    fn end(self) -> Result<(), Stop> {
        self.finish()
    }
}

impl ser::SerializeTupleVariant for Compound<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Stop> {
        self.element(value)
    }
    fn end(self) -> Result<(), Stop> {
        self.finish()
    }
}

impl ser::SerializeMap for Compound<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_key<T: Serialize + ?Sized>(&mut self, key: &T) -> Result<(), Stop> {
        self.pending_key = Some(key_text(key));
        Ok(())
    }
    fn serialize_value<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Stop> {
        let key = self.pending_key.take().unwrap_or_else(|| "?".into());
        self.walker.path.push(Segment::Key(key));
        value.serialize(&mut *self.walker)?;
        self.walker.path.pop();
        Ok(())
    }
    fn end(self) -> Result<(), Stop> {
        self.finish()
    }
}

impl ser::SerializeStruct for Compound<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, key: &'static str, value: &T) -> Result<(), Stop> {
        self.field(key, value)
    }
    fn end(self) -> Result<(), Stop> {
        self.finish()
    }
}

impl ser::SerializeStructVariant for Compound<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, key: &'static str, value: &T) -> Result<(), Stop> {
        self.field(key, value)
    }
    fn end(self) -> Result<(), Stop> {
        self.finish()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde::Serialize;
    use std::collections::BTreeMap;

    #[derive(Serialize)]
    struct Bound {
        value_v: f64,
    }
    #[derive(Serialize)]
    struct Spread {
        min: Bound,
        max: Bound,
    }
    #[derive(Serialize)]
    enum Choice {
        AnchorOhm(f64),
        Pair(f64, f64),
        Named { level_v: f64 },
    }
    #[derive(Serialize)]
    #[serde(tag = "kind")]
    enum Tagged {
        Level { level_v: f64 },
    }
    #[derive(Serialize)]
    struct Outer {
        vt_upper: Spread,
        list: Vec<Option<f64>>,
        choice: Choice,
        tagged: Tagged,
        table: BTreeMap<String, (f64, f32)>,
    }

    fn outer() -> Outer {
        Outer {
            vt_upper: Spread { min: Bound { value_v: 1.0 }, max: Bound { value_v: 2.0 } },
            list: vec![Some(1.0), None],
            choice: Choice::AnchorOhm(1e3),
            tagged: Tagged::Level { level_v: 0.0 },
            table: BTreeMap::from([("a".to_string(), (1.0, 2.0f32))]),
        }
    }

    #[test]
    fn all_finite_passes() {
        assert_eq!(first_non_finite("x", &outer()), None);
        assert_eq!(check("x", &outer()), Ok(()));
        // Huge and tiny numbers are finite: only NaN and ±∞ are refused here (ranges are limits.rs's job).
        assert_eq!(check("x", &[f64::MAX, f64::MIN_POSITIVE, 5e-324, -0.0]), Ok(()));
    }

    #[test]
    fn names_the_path_of_the_first_non_finite_number_in_every_shape() {
        let mut o = outer();
        o.vt_upper.max.value_v = f64::INFINITY;
        let e = check("worst_case", &o).unwrap_err();
        assert_eq!(e, DesignError::NotFinite { quantity: "worst_case.vt_upper.max.value_v".into() });
        assert!(e.to_string().starts_with("worst_case.vt_upper.max.value_v is not a finite number"), "{e}");

        type Case = (fn(&mut Outer), &'static str);
        let cases: Vec<Case> = vec![
            (|o| o.list[1] = Some(f64::NAN), "r.list[1]"),
            (|o| o.choice = Choice::AnchorOhm(f64::NEG_INFINITY), "r.choice.AnchorOhm"),
            (|o| o.choice = Choice::Pair(1.0, f64::NAN), "r.choice.Pair[1]"),
            (|o| o.choice = Choice::Named { level_v: f64::NAN }, "r.choice.Named.level_v"),
            (|o| o.tagged = Tagged::Level { level_v: f64::INFINITY }, "r.tagged.level_v"),
            (|o| o.table.insert("b".into(), (0.0, f32::NAN)).map_or((), |_| ()), "r.table.b[1]"),
        ];
        for (mutate, path) in cases {
            let mut o = outer();
            mutate(&mut o);
            let found = first_non_finite("r", &o).expect(path);
            assert_eq!(found.path, path);
        }
        // Without a root, a bare number is "value".
        assert_eq!(first_non_finite("", &f64::NAN).unwrap().path, "value");
    }

    #[test]
    fn keep_reports_under_the_study_and_drops_the_result() {
        let mut errors = Vec::new();
        let mut fail = |s: &str, e: DesignError| errors.push((s.to_string(), e));
        assert_eq!(keep("signal", Some(vec![1.0, 2.0]), &mut fail), Some(vec![1.0, 2.0]));
        assert_eq!(keep("signal", Some(vec![1.0, f64::NAN]), &mut fail), None);
        assert_eq!(keep::<f64>("signal", None, &mut fail), None);
        assert_eq!(errors.len(), 1);
        assert_eq!(errors[0].0, "signal");
        assert_eq!(errors[0].1, DesignError::NotFinite { quantity: "signal[1]".into() });
    }
}
