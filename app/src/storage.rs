//! The notebook in the browser's local storage.
//!
//! Layout (envelope version 1): `hysteron/index` holds the ordered list of design ids;
//! `hysteron/design/<id>` holds one [`StoredDesign`]. Each design has its own key so that one corrupt
//! record never blocks the others and two tabs editing different designs never overwrite each other.
//! A record that cannot be read is set aside (left untouched in storage, listed with its message).

use gloo_storage::{LocalStorage, Storage};
use hysteron_core::record::DesignRecord;
use serde::{Deserialize, Serialize};
use crate::unread::Unread;

/// Key of the ordered id list.
pub const INDEX_KEY: &str = "hysteron/index";
/// Version of the storage envelope written by this build.
pub const ENVELOPE_VERSION: u32 = 1;

/// The storage key of one design.
pub fn design_key(id: &str) -> String {
    format!("hysteron/design/{id}")
}

/// The snapshot kept beside each design; its layout (field names) is part of the storage envelope.
pub use hysteron_core::overview::{Snapshot, SnapshotPart};

/// One design as stored.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StoredDesign {
    /// Envelope version.
    pub envelope_version: u32,
    /// Stable id.
    pub id: String,
    /// Incremented on every save; used to notice edits from another tab.
    pub revision: u64,
    /// Last edit, milliseconds since the Unix epoch.
    pub saved_at_ms: f64,
    /// The design record as JSON (kept raw so an unreadable one is never rewritten).
    pub record: serde_json::Value,
    /// Results at save time (absent when the design could not be computed).
    pub snapshot: Option<Snapshot>,
    /// Study results computed on request (Monte Carlo, signal test, standard-value search), each
    /// with the inputs it was computed from ([`Studies`]). Kept as raw JSON: results that cannot
    /// be read are dropped on load, never the design. Absent in designs stored before studies were
    /// kept; a new field with a default, so the envelope version stays 1.
    #[serde(default, skip_serializing_if = "serde_json::Value::is_null")]
    pub studies: serde_json::Value,
}

/// One study's result kept with a design, with the inputs it was computed from: a later edit that
/// changes those inputs makes it out of date (shown as such, never silently dropped); an edit
/// elsewhere leaves it current, and undoing back to the same inputs makes it current again.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Kept<T> {
    /// The study's inputs as JSON text (see `state::study_inputs`).
    pub inputs: String,
    /// The result.
    pub result: T,
    /// How long the run took, milliseconds.
    pub elapsed_ms: f64,
}

/// The study results kept with one design, each as the JSON it was stored as ([`Unread`]): read
/// into its type by the study that shows it, so the page's first module carries no code for them.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct Studies {
    /// The last Monte Carlo run. (Another study kept here is one more optional field, read
    /// leniently in [`Studies::from_value`], and one more [`crate::view::state::Study`].)
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub monte_carlo: Option<Kept<Unread<hysteron_core::tolerance::monte_carlo::MonteCarloResult>>>,
    /// The last signal test: its compact report only (counts, Rice's check, the sweep), never the
    /// samples, which are made again by running it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub signal: Option<Kept<Unread<hysteron_core::signal::report::SignalReport>>>,
    /// The last standard-value search, with the current budget it had to meet.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub search: Option<Kept<Unread<KeptSearch>>>,
}

/// A standard-value search kept with its design.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct KeptSearch {
    /// What the search found.
    pub report: hysteron_core::search::SearchReport,
    /// The current budget the listed sets meet, amperes (`None`: no budget).
    pub budget_a: Option<f64>,
}

impl Studies {
    /// True when no study result is kept.
    pub fn is_empty(&self) -> bool {
        self.monte_carlo.is_none() && self.signal.is_none() && self.search.is_none()
    }

    fn to_value(&self) -> serde_json::Value {
        if self.is_empty() {
            serde_json::Value::Null
        } else {
            serde_json::to_value(self).unwrap_or(serde_json::Value::Null)
        }
    }

    /// Reads stored study results; one that is not a kept result at all (no inputs, no result) is
    /// dropped (it is recomputed on request). A result of another shape is kept as it was and not
    /// shown ([`Unread::read`]).
    pub fn from_value(v: &serde_json::Value) -> Studies {
        let Some(o) = v.as_object() else { return Studies::default() };
        let field = |k: &str| o.get(k).cloned().unwrap_or(serde_json::Value::Null);
        Studies {
            monte_carlo: serde_json::from_value(field("monte_carlo")).ok().flatten(),
            signal: serde_json::from_value(field("signal")).ok().flatten(),
            search: serde_json::from_value(field("search")).ok().flatten(),
        }
    }
}

/// A design that could be read.
#[derive(Debug, Clone, PartialEq)]
pub struct Entry {
    /// Stable id.
    pub id: String,
    /// Revision last read or written by this tab.
    pub revision: u64,
    /// Last edit, ms since the epoch.
    pub saved_at_ms: f64,
    /// The design.
    pub record: DesignRecord,
    /// Results at save time.
    pub snapshot: Option<Snapshot>,
    /// Study results kept with the design.
    pub studies: Studies,
}

/// A stored item that could not be read, kept untouched.
#[derive(Debug, Clone, PartialEq)]
pub struct SetAside {
    /// Its storage key.
    pub key: String,
    /// Why it could not be read.
    pub message: String,
    /// Its raw text, so it can still be exported.
    pub raw: String,
}

/// What loading found.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Loaded {
    /// Readable designs in notebook order.
    pub entries: Vec<Entry>,
    /// Unreadable items.
    pub set_aside: Vec<SetAside>,
    /// Set when storage cannot be read at all (private mode, disabled, blocked): the designs that
    /// may be stored are unknown, so nothing is shown as the notebook and nothing is written.
    pub unavailable: Option<String>,
    /// Set when storage can be read but refuses writes (full): the stored designs are shown,
    /// and saves report their own failure.
    pub read_only: Option<String>,
}

/// Local storage, when it can be read: the browser may refuse it (private mode, disabled or
/// blocked site data), and reading may throw.
pub fn readable() -> Result<web_sys::Storage, String> {
    let storage = web_sys::window()
        .ok_or("no window")?
        .local_storage()
        .map_err(|_| "this browser refuses access to local storage".to_string())?
        .ok_or("this browser has no local storage")?;
    storage.length().map_err(|_| "local storage refuses reads".to_string())?;
    storage.get_item(INDEX_KEY).map_err(|_| "local storage refuses reads".to_string())?;
    Ok(storage)
}

/// Whether local storage can be written (false in some private modes, when disabled or full).
pub fn available() -> Result<(), String> {
    let storage = readable()?;
    storage
        .set_item("hysteron/probe", "1")
        .map_err(|_| "local storage refuses writes (private mode or storage full)".to_string())?;
    storage.remove_item("hysteron/probe").ok();
    Ok(())
}

fn raw_get(key: &str) -> Option<String> {
    web_sys::window()?.local_storage().ok()??.get_item(key).ok()?
}

/// Reads one design as stored now (another tab may have written it): `None` when absent.
pub fn read(id: &str) -> Option<Result<Entry, SetAside>> {
    let key = design_key(id);
    raw_get(&key).map(|text| parse_stored(&key, &text))
}

/// The revision stored under `id` now, when there is a readable one.
pub fn stored_revision(id: &str) -> Option<u64> {
    serde_json::from_str::<StoredDesign>(&raw_get(&design_key(id))?).ok().map(|s| s.revision)
}

/// Parses one stored design's text.
pub fn parse_stored(key: &str, text: &str) -> Result<Entry, SetAside> {
    let aside = |message: String| SetAside { key: key.to_string(), message, raw: text.to_string() };
    let stored: StoredDesign =
        serde_json::from_str(text).map_err(|e| aside(format!("the stored design is damaged ({e})")))?;
    if stored.envelope_version > ENVELOPE_VERSION {
        return Err(aside(format!(
            "saved by a newer version of Hysteron (storage version {}); open it there or export it",
            stored.envelope_version
        )));
    }
    let record = DesignRecord::from_value(stored.record.clone()).map_err(|e| aside(e.to_string()))?;
    let studies = Studies::from_value(&stored.studies);
    Ok(Entry { id: stored.id, revision: stored.revision, saved_at_ms: stored.saved_at_ms, record, snapshot: stored.snapshot, studies })
}

/// Reads the whole notebook. Never fails: problems are reported per item.
pub fn load() -> Loaded {
    if let Err(e) = readable() {
        return Loaded { unavailable: Some(e), ..Loaded::default() };
    }
    let mut loaded = Loaded { read_only: available().err(), ..Loaded::default() };
    let ids: Vec<String> = match raw_get(INDEX_KEY) {
        None => Vec::new(),
        Some(text) => match serde_json::from_str::<Vec<String>>(&text) {
            Ok(ids) => ids,
            Err(e) => {
                loaded.set_aside.push(SetAside {
                    key: INDEX_KEY.into(),
                    message: format!("the notebook's list was damaged ({e}); designs were found by key instead"),
                    raw: text,
                });
                scan_design_keys()
            }
        },
    };
    // Designs stored under a key but missing from the list (written by another tab) are found too.
    let mut all = ids;
    for id in scan_design_keys() {
        if !all.contains(&id) {
            all.push(id);
        }
    }
    for id in all {
        let key = design_key(&id);
        let Some(text) = raw_get(&key) else { continue };
        match parse_stored(&key, &text) {
            Ok(e) => loaded.entries.push(e),
            Err(a) => loaded.set_aside.push(a),
        }
    }
    loaded
}

/// The ids of every design stored under its own key, sorted (whether the list names them or not).
pub(crate) fn scan_design_keys() -> Vec<String> {
    let mut ids = Vec::new();
    let Some(storage) = web_sys::window().and_then(|w| w.local_storage().ok().flatten()) else { return ids };
    let n = storage.length().unwrap_or(0);
    for i in 0..n {
        if let Ok(Some(k)) = storage.key(i) {
            if let Some(id) = k.strip_prefix("hysteron/design/") {
                ids.push(id.to_string());
            }
        }
    }
    ids.sort();
    ids
}

/// Writes one design and the id list. Returns the new revision, or why it failed.
/// When another tab saved a newer revision meanwhile, nothing is overwritten: `Err(Conflict)`.
pub fn save(entry: &Entry, order: &[String]) -> Result<u64, SaveError> {
    let key = design_key(&entry.id);
    if let Some(theirs) = stored_revision(&entry.id) {
        if theirs > entry.revision {
            return Err(SaveError::Conflict { theirs });
        }
    }
    let revision = entry.revision + 1;
    let stored = StoredDesign {
        envelope_version: ENVELOPE_VERSION,
        id: entry.id.clone(),
        revision,
        saved_at_ms: entry.saved_at_ms,
        record: serde_json::to_value(&entry.record).map_err(|e| SaveError::Failed(e.to_string()))?,
        snapshot: entry.snapshot.clone(),
        studies: entry.studies.to_value(),
    };
    LocalStorage::set(&key, &stored).map_err(|e| SaveError::Failed(format!("could not save: {e}")))?;
    LocalStorage::set(INDEX_KEY, order).map_err(|e| SaveError::Failed(format!("could not save the list: {e}")))?;
    Ok(revision)
}

/// Removes one design from storage (the page keeps it in memory for undo), unless another tab
/// saved a newer revision than `revision` meanwhile: then nothing is removed, `Err(Conflict)`.
pub fn remove(id: &str, revision: u64, order: &[String]) -> Result<(), SaveError> {
    if let Some(theirs) = stored_revision(id) {
        if theirs > revision {
            return Err(SaveError::Conflict { theirs });
        }
    }
    LocalStorage::delete(design_key(id));
    LocalStorage::set(INDEX_KEY, order).map_err(|e| SaveError::Failed(format!("could not save the list: {e}")))
}

/// Why a save did not happen.
#[derive(Debug, Clone, PartialEq)]
pub enum SaveError {
    /// Another tab saved a newer revision of the same design.
    Conflict {
        /// Their revision.
        theirs: u64,
    },
    /// Storage refused the write (full, unavailable).
    Failed(String),
}

/// Key (in session storage) of what this tab showed: the open design and the scroll position.
pub const VIEW_KEY: &str = "hysteron/view";

/// What this tab showed when it was last left: kept in session storage, so a reload of the tab
/// comes back to the same design and place, while each tab keeps its own.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct View {
    /// Id of the open design.
    pub open: Option<String>,
    /// Vertical scroll position of the page, CSS pixels.
    #[serde(default)]
    pub scroll_y: f64,
}

fn session() -> Option<web_sys::Storage> {
    web_sys::window()?.session_storage().ok()?
}

/// The view this tab last remembered (default when none or unreadable).
pub fn remembered_view() -> View {
    session()
        .and_then(|s| s.get_item(VIEW_KEY).ok().flatten())
        .and_then(|t| serde_json::from_str(&t).ok())
        .unwrap_or_default()
}

/// Remembers the view for a reload of this tab (silently does nothing when storage refuses).
pub fn remember_view(view: &View) {
    if let (Some(s), Ok(t)) = (session(), serde_json::to_string(view)) {
        let _ = s.set_item(VIEW_KEY, &t);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A kept study result written by another build (a shape this one cannot read) is kept through
    /// a load and a save exactly as stored, and simply not shown; a readable one reads back.
    #[test]
    fn kept_results_survive_a_load_and_a_save_whether_readable_or_not() {
        let stored = serde_json::json!({
            "monte_carlo": { "inputs": "[1]", "result": { "yield_of_another_build": [1, 2, 3] }, "elapsed_ms": 12.5 },
            "search": { "inputs": "[2]", "result": { "report": null, "budget_a": 1e-4 }, "elapsed_ms": 3.0 },
            "signal": { "no_inputs": true }
        });
        let studies = Studies::from_value(&stored);
        let mc = studies.monte_carlo.as_ref().expect("an unreadable result is kept");
        assert_eq!(mc.result.read(), None, "and not shown");
        assert!(studies.search.as_ref().expect("kept").result.read().is_none());
        assert!(studies.signal.is_none(), "an entry that is not a kept result at all is dropped");
        let written = studies.to_value();
        assert_eq!(written["monte_carlo"], stored["monte_carlo"]);
        assert_eq!(written["search"], stored["search"]);
    }

    #[test]
    fn a_kept_monte_carlo_result_reads_back_as_kept() {
        let record = hysteron_core::catalog::demos().into_iter().next().expect("a demo").record();
        let mut settings = record.tolerance.clone().unwrap_or_default();
        settings.monte_carlo.trials = 300;
        let result = hysteron_core::tolerance::monte_carlo::monte_carlo(&record.circuit, &settings).expect("runs");
        let kept = Kept { inputs: "x".into(), result: Unread::new(result.clone()), elapsed_ms: 4.0 };
        let studies = Studies { monte_carlo: Some(kept), ..Studies::default() };
        let text = serde_json::to_string(&studies.to_value()).unwrap();
        let back = Studies::from_value(&serde_json::from_str(&text).unwrap());
        assert_eq!(back.monte_carlo.as_ref().unwrap().result.read(), Some(&result));
        assert_eq!(back, studies);
    }
}
