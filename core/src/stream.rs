//! Streaming evaluation of design records: one record or a JSON array of records is read element by
//! element, and each record's result is handed on as soon as it is computed, so the memory used does
//! not grow with the length of the array (one record and one result at a time).
//!
//! The reading is serde_json's pull parser driven by a [`Visitor`] whose `visit_seq` takes the
//! array's elements one at a time; nothing here does I/O itself: the caller passes a
//! [`serde_json::Deserializer`] over whatever it reads from and a sink for the results.

use crate::evaluate::{evaluate, RecordResult};
use crate::record::{DesignRecord, RecordError};
use serde::de::{self, Deserialize, Deserializer as _, MapAccess, SeqAccess, Visitor};
use serde_json::Value;

/// What a completed stream held.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct StreamSummary {
    /// Records read (good or bad).
    pub records: usize,
    /// Records that could not be read, or whose evaluation has at least one failed study.
    pub failed: usize,
}

/// Why a stream stopped before its end. Results handed to the sink before it stand.
#[derive(Debug)]
pub enum StreamError<E> {
    /// The input could not be read (an I/O error from the underlying reader).
    Read(String),
    /// The input is not JSON, ends early, or has text after the records.
    Input(RecordError),
    /// The sink refused a result (for example its output was closed); reading stopped there.
    Sink(E),
}

/// True when a result carries an error: the record could not be read, or a study failed.
pub fn failed(result: &RecordResult) -> bool {
    match result {
        RecordResult::Ok(e) => !e.errors.is_empty(),
        RecordResult::Error { .. } => true,
    }
}

/// Evaluates one record (a JSON object) or each element of a JSON array of records, in order, and
/// hands each [`RecordResult`] to `sink` before reading the next element. Records that are JSON but
/// not a readable record give a [`RecordResult::Error`] with their position; only text that is not
/// JSON (or I/O failure, or a sink error) stops the stream. The results are the same, in the same
/// order, as [`crate::evaluate::evaluate_json`] gives for the whole text.
pub fn evaluate_stream<'de, R, E>(
    de: &mut serde_json::Deserializer<R>,
    mut sink: impl FnMut(RecordResult) -> Result<(), E>,
) -> Result<StreamSummary, StreamError<E>>
where
    R: serde_json::de::Read<'de>,
{
    let mut summary = StreamSummary::default();
    let mut stopped: Option<E> = None;
    let top = Top { sink: &mut sink, summary: &mut summary, stopped: &mut stopped };
    let read = de.deserialize_any(top).and_then(|()| de.end());
    if let Some(e) = stopped {
        return Err(StreamError::Sink(e));
    }
    match read {
        Ok(()) => Ok(summary),
        Err(e) if e.is_io() => Err(StreamError::Read(e.to_string())),
        Err(e) => Err(StreamError::Input(RecordError::Malformed { message: e.to_string() })),
    }
}

/// The top-level visitor: an array streams, anything else is one record.
struct Top<'a, F, E> {
    sink: &'a mut F,
    summary: &'a mut StreamSummary,
    stopped: &'a mut Option<E>,
}

impl<F, E> Top<'_, F, E>
where
    F: FnMut(RecordResult) -> Result<(), E>,
{
    /// Evaluates one element and hands its result on; false when the sink refused it.
    fn deliver(&mut self, index: usize, value: Value) -> bool {
        let result = match DesignRecord::from_value(value) {
            Ok(r) => RecordResult::Ok(Box::new(evaluate(&r))),
            Err(error) => RecordResult::Error { index, message: error.to_string(), error },
        };
        self.summary.records += 1;
        self.summary.failed += failed(&result) as usize;
        match (self.sink)(result) {
            Ok(()) => true,
            Err(e) => {
                *self.stopped = Some(e);
                false
            }
        }
    }

    fn single<Er: de::Error>(mut self, value: Value) -> Result<(), Er> {
        if self.deliver(0, value) { Ok(()) } else { Err(Er::custom("output closed")) }
    }
}

impl<'de, F, E> Visitor<'de> for Top<'_, F, E>
where
    F: FnMut(RecordResult) -> Result<(), E>,
{
    type Value = ();

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("a design record or an array of design records")
    }

    fn visit_seq<A: SeqAccess<'de>>(mut self, mut seq: A) -> Result<(), A::Error> {
        let mut index = 0;
        while let Some(value) = seq.next_element::<Value>()? {
            if !self.deliver(index, value) {
                return Err(de::Error::custom("output closed"));
            }
            index += 1;
        }
        Ok(())
    }

    fn visit_map<A: MapAccess<'de>>(self, map: A) -> Result<(), A::Error> {
        let value = Value::deserialize(de::value::MapAccessDeserializer::new(map))?;
        self.single(value)
    }

    fn visit_bool<Er: de::Error>(self, v: bool) -> Result<(), Er> {
        self.single(Value::from(v))
    }

    fn visit_i64<Er: de::Error>(self, v: i64) -> Result<(), Er> {
        self.single(Value::from(v))
    }

    fn visit_u64<Er: de::Error>(self, v: u64) -> Result<(), Er> {
        self.single(Value::from(v))
    }

    fn visit_f64<Er: de::Error>(self, v: f64) -> Result<(), Er> {
        self.single(Value::from(v))
    }

    fn visit_str<Er: de::Error>(self, v: &str) -> Result<(), Er> {
        self.single(Value::from(v))
    }

    fn visit_unit<Er: de::Error>(self) -> Result<(), Er> {
        self.single(Value::Null)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::evaluate::evaluate_json;

    fn collect(text: &str) -> (Result<StreamSummary, StreamError<()>>, Vec<RecordResult>) {
        let mut out = Vec::new();
        let mut de = serde_json::Deserializer::from_str(text);
        let r = evaluate_stream(&mut de, |x| {
            out.push(x);
            Ok::<(), ()>(())
        });
        (r, out)
    }

    fn template() -> String {
        crate::catalog::templates()[0].record().to_json()
    }

    #[test]
    fn same_results_as_the_whole_text_reader() {
        for text in [
            format!("[{0}, {{\"schema_version\": 1}}, 3, {0}]", template()),
            template(),
            "[]".to_string(),
            "\"a string\"".to_string(),
            "null".to_string(),
        ] {
            let (r, got) = collect(&text);
            let want = evaluate_json(&text).unwrap();
            assert_eq!(got, want, "{text}");
            let s = r.unwrap();
            assert_eq!(s.records, want.len());
            assert_eq!(s.failed, want.iter().filter(|x| failed(x)).count());
        }
    }

    #[test]
    fn not_json_trailing_text_and_truncation_stop_with_input_errors() {
        for text in ["{ not json", "", "[1, 2", "{} {}", "[] x"] {
            let (r, _) = collect(text);
            assert!(matches!(r, Err(StreamError::Input(RecordError::Malformed { .. }))), "{text}: {r:?}");
        }
        // Elements before a syntax error were delivered.
        let (r, got) = collect(&format!("[{}, oops]", template()));
        assert!(matches!(r, Err(StreamError::Input(_))));
        assert_eq!(got.len(), 1);
    }

    #[test]
    fn a_sink_error_stops_reading_at_once() {
        let text = format!("[{0}, {0}, {0}]", template());
        let mut de = serde_json::Deserializer::from_str(&text);
        let mut seen = 0;
        let r = evaluate_stream(&mut de, |_| {
            seen += 1;
            if seen == 2 { Err("closed") } else { Ok(()) }
        });
        assert!(matches!(r, Err(StreamError::Sink("closed"))));
        assert_eq!(seen, 2);
    }
}
