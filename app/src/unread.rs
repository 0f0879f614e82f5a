//! A stored value kept as the JSON it was stored as, read into its type only where it is shown.
//!
//! The page's first module reads every design from storage at load, with the study results kept
//! beside it. Reading those results into their types there would put the code that reads a Monte
//! Carlo result, a signal report or a search report into the first module; kept as JSON, that code
//! lives in the piece of the page that shows the study (the generic [`Unread::read`] is
//! instantiated where it is called). Read once, then kept: showing a result on every edit does not
//! read it again. Written back as it was read, so a result this build cannot read is never lost.

use serde::de::DeserializeOwned;
use serde::{Deserialize, Deserializer, Serialize, Serializer};
use std::marker::PhantomData;
use std::sync::{Arc, OnceLock};

/// A value of type `T` kept as JSON (see the module's note).
pub struct Unread<T> {
    json: serde_json::Value,
    read: Arc<OnceLock<Option<T>>>,
    _type: PhantomData<fn() -> T>,
}

impl<T> Unread<T> {
    /// The JSON as stored.
    pub fn json(&self) -> &serde_json::Value {
        &self.json
    }

    fn from_json(json: serde_json::Value) -> Self {
        Unread { json, read: Arc::new(OnceLock::new()), _type: PhantomData }
    }
}

impl<T: Serialize> Unread<T> {
    /// Keeps `value` (its JSON is written now; reading it back gives `value`).
    pub fn new(value: T) -> Self {
        let json = serde_json::to_value(&value).unwrap_or(serde_json::Value::Null);
        let read = OnceLock::new();
        let _ = read.set(Some(value));
        Unread { json, read: Arc::new(read), _type: PhantomData }
    }
}

impl<T: DeserializeOwned> Unread<T> {
    /// The value, read from its JSON on the first call; `None` when the JSON is not a `T` (a
    /// result stored by another build): it is then not shown, and still kept as it was.
    pub fn read(&self) -> Option<&T> {
        self.read.get_or_init(|| serde_json::from_value(self.json.clone()).ok()).as_ref()
    }
}

impl<T> Clone for Unread<T> {
    fn clone(&self) -> Self {
        Unread { json: self.json.clone(), read: self.read.clone(), _type: PhantomData }
    }
}

impl<T> PartialEq for Unread<T> {
    fn eq(&self, other: &Self) -> bool {
        self.json == other.json
    }
}

impl<T> std::fmt::Debug for Unread<T> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "Unread({})", self.json)
    }
}

impl<T> Serialize for Unread<T> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        self.json.serialize(s)
    }
}

impl<'de, T> Deserialize<'de> for Unread<T> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        serde_json::Value::deserialize(d).map(Unread::from_json)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
    struct Figure {
        volts: f64,
    }

    #[test]
    fn a_kept_value_reads_back_and_writes_back_the_same_json() {
        let kept = Unread::new(Figure { volts: 2.5 });
        let text = serde_json::to_string(&kept).unwrap();
        assert_eq!(text, r#"{"volts":2.5}"#);
        let back: Unread<Figure> = serde_json::from_str(&text).unwrap();
        assert_eq!(back.read(), Some(&Figure { volts: 2.5 }));
        assert_eq!(back, kept);
    }

    #[test]
    fn json_of_another_shape_is_not_shown_but_is_kept_as_it_was() {
        let text = r#"{"note":[1,2],"volts":"high"}"#;
        let back: Unread<Figure> = serde_json::from_str(text).unwrap();
        assert_eq!(back.read(), None);
        assert_eq!(serde_json::to_string(&back).unwrap(), text);
    }
}
