//! Mutation of design records for the property and fuzz tests: every numeric field of the catalog's
//! records (templates and demos) set to extremes, and two independent oracles for "every number in
//! a successful result is finite".

use hysteron_core::catalog;
use hysteron_core::evaluate::Evaluation;
use serde_json::Value;

/// The values a numeric field is set to. JSON cannot hold ±∞ or NaN, so the extremes are the
/// largest and the smallest magnitudes a double holds, zero, and values just outside the ranges of
/// `core::limits`.
pub const EXTREMES: [f64; 14] =
    [0.0, 5e-324, -5e-324, 1e308, -1e308, 1e-300, 1e300, -1.0, 2.2250738585072014e-308, 1e12, -1e12, 1e-15, 1e5, 9007199254740993.0];

/// Fields whose value sets how much work a study does (samples, trials, corners, sweep levels,
/// simulated cycles): they are only ever mutated downwards, so one input's time stays bounded
/// (the upward bounds of these are checked by the studies' own limits and tests).
pub const WORK_FIELDS: [&str; 9] =
    ["duration_s", "sample_rate_hz", "trials", "corner_limit", "histogram_bins", "steps", "oscillator_cycles", "bounce_toggles", "top_n"];

/// One segment of a path into a JSON value.
#[derive(Debug, Clone, PartialEq)]
pub enum Seg {
    /// An object key.
    Key(String),
    /// An array index.
    Index(usize),
}

/// The catalog's records (templates, then demos) as JSON values.
pub fn catalog_values() -> Vec<Value> {
    catalog::templates()
        .into_iter()
        .chain(catalog::demos())
        .map(|s| serde_json::to_value(s.record()).expect("a record serialises"))
        .collect()
}

/// Paths of every numeric leaf of `v` (schema_version excluded: a wrong version is refused up front).
pub fn numeric_paths(v: &Value) -> Vec<Vec<Seg>> {
    fn walk(v: &Value, path: &mut Vec<Seg>, out: &mut Vec<Vec<Seg>>) {
        match v {
            Value::Number(_) => out.push(path.clone()),
            Value::Array(items) => {
                for (i, x) in items.iter().enumerate() {
                    path.push(Seg::Index(i));
                    walk(x, path, out);
                    path.pop();
                }
            }
            Value::Object(map) => {
                for (k, x) in map {
                    if path.is_empty() && k == "schema_version" {
                        continue;
                    }
                    path.push(Seg::Key(k.clone()));
                    walk(x, path, out);
                    path.pop();
                }
            }
            _ => {}
        }
    }
    let mut out = Vec::new();
    walk(v, &mut Vec::new(), &mut out);
    out
}

fn leaf<'a>(v: &'a mut Value, path: &[Seg]) -> Option<&'a mut Value> {
    let mut cur = v;
    for s in path {
        cur = match s {
            Seg::Key(k) => cur.get_mut(k.as_str())?,
            Seg::Index(i) => cur.get_mut(*i)?,
        };
    }
    Some(cur)
}

/// Sets the numeric field at `path` from a choice `pick` (any number: reduced modulo the choices).
/// Integer fields get integers (0, 1, the largest u64, or the extreme itself, which the record
/// reader refuses); work-size fields only shrink.
pub fn set_extreme(v: &mut Value, path: &[Seg], pick: u32) {
    let work = matches!(path.last(), Some(Seg::Key(k)) if WORK_FIELDS.contains(&k.as_str()));
    let Some(x) = leaf(v, path) else { return };
    let Some(old) = x.as_f64() else { return };
    let new: Value = if work {
        let choices = [0.0, 5e-324, 1.0, old / 10.0, old / 2.0];
        let c = choices[pick as usize % choices.len()];
        if x.is_u64() {
            Value::from(c.floor() as u64)
        } else {
            Value::from(c)
        }
    } else if x.is_u64() && pick.is_multiple_of(3) {
        let choices = [0u64, 1, u64::MAX, u64::from(u32::MAX)];
        Value::from(choices[(pick / 3) as usize % choices.len()])
    } else {
        let e = EXTREMES[pick as usize % EXTREMES.len()];
        // Sometimes scale the entered value instead: far from it, yet with its sign and digits.
        match (pick / 16) % 4 {
            0 => serde_json::Number::from_f64(old * 1e150).map_or(Value::from(e), Value::Number),
            1 => serde_json::Number::from_f64(old * 1e-150).map_or(Value::from(e), Value::Number),
            _ => Value::from(e),
        }
    };
    *x = new;
}

/// Mutates up to `picks.len()` numeric fields of `record`, each `(field choice, value choice)`.
pub fn mutate(record: &Value, picks: &[(u32, u32)]) -> Value {
    let mut v = record.clone();
    let paths = numeric_paths(&v);
    if paths.is_empty() {
        return v;
    }
    for &(field, value) in picks {
        let path = &paths[field as usize % paths.len()];
        set_extreme(&mut v, path, value);
    }
    v
}

/// Both oracles on one evaluation: `Err` describes the first non-finite number.
///
/// 1. The guard (`core::finite`) walks the result through serde.
/// 2. Independently, a JSON round trip: serde_json writes NaN and ±∞ as `null`, which either fails
///    to read back into an `f64` field or reads back as `None` (or, for NaN, compares unequal), so
///    a result survives the round trip unchanged exactly when every number in it is finite (the
///    `float_roundtrip` feature makes finite doubles exact).
pub fn check_finite(e: &Evaluation) -> Result<(), String> {
    if let Some(found) = hysteron_core::finite::first_non_finite("evaluation", e) {
        return Err(format!("guard: {found}"));
    }
    let value = serde_json::to_value(e).map_err(|x| format!("serialise: {x}"))?;
    let back: Evaluation =
        serde_json::from_value(value.clone()).map_err(|x| format!("JSON round trip fails (a null where a number belongs?): {x}"))?;
    if &back != e {
        return Err(format!("JSON round trip changes the result (a non-finite number became null): {value}"));
    }
    Ok(())
}
