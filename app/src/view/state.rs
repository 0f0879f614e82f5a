//! The notebook's reactive state and the one place where edits are applied and saved.

use crate::storage::{self, Entry, SaveError, SetAside, Snapshot, SnapshotPart};
use hysteron_core::device::Comparator;
use hysteron_core::record::DesignRecord;
use hysteron_core::topology::{inverting::InvertingSchmitt, transfer_curve, Circuit, ParameterKind, Topology};
use leptos::prelude::*;

/// Shared notebook state, provided as context by `App`.
#[derive(Clone, Copy)]
pub struct Notebook {
    /// Designs in notebook order.
    pub entries: RwSignal<Vec<Entry>>,
    /// Id of the open design.
    pub current: RwSignal<Option<String>>,
    /// Stored items that could not be read.
    pub set_aside: RwSignal<Vec<SetAside>>,
    /// A page-wide message (storage unavailable, conflicts).
    pub banner: RwSignal<Option<String>>,
    /// False when storage is unavailable: the page works in memory.
    pub persistent: RwSignal<bool>,
}

/// Milliseconds since the Unix epoch.
pub fn now_ms() -> f64 {
    js_sys::Date::now()
}

/// A fresh id that sorts by creation time.
pub fn new_id() -> String {
    format!("d{:x}{:04x}", now_ms() as u64, (js_sys::Math::random() * 65535.0) as u32)
}

/// Computes what is kept beside a design when it is saved.
pub fn snapshot_of(record: &DesignRecord) -> Option<Snapshot> {
    let c = &record.circuit;
    let t = hysteron_core::evaluate::thresholds(c).ok()?;
    let span = (t.vt_upper_v - t.vt_lower_v).abs().max(0.5);
    let curve = transfer_curve(c, t.vt_lower_v - span, t.vt_upper_v + span).ok()?;
    let parts = c
        .parameters()
        .into_iter()
        .filter(|p| p.kind == ParameterKind::Resistor)
        .map(|p| SnapshotPart { designator: p.designator.unwrap_or_default(), label: p.label, value: p.value })
        .collect();
    Some(Snapshot {
        vt_upper_v: t.vt_upper_v,
        vt_lower_v: t.vt_lower_v,
        hysteresis_v: t.hysteresis_v(),
        curve,
        parts,
        computed_by: env!("CARGO_PKG_VERSION").to_string(),
    })
}

/// The design a new blank notebook entry starts from.
pub fn blank_record() -> DesignRecord {
    DesignRecord::new(
        "Untitled design",
        Topology::Inverting(InvertingSchmitt::single_supply(100e3, 100e3, 100e3, Comparator::ideal(5.0))),
    )
}

impl Notebook {
    /// Loads the notebook from storage; problems become messages, never a dead page.
    pub fn load() -> Self {
        let loaded = storage::load();
        let current = loaded.entries.first().map(|e| e.id.clone());
        let banner = loaded.unavailable.as_ref().map(|e| {
            format!("Designs cannot be saved in this browser ({e}). You can keep working; export a design to keep it.")
        });
        let nb = Notebook {
            entries: RwSignal::new(loaded.entries),
            current: RwSignal::new(current),
            set_aside: RwSignal::new(loaded.set_aside),
            banner: RwSignal::new(banner),
            persistent: RwSignal::new(loaded.unavailable.is_none()),
        };
        if nb.entries.with_untracked(|e| e.is_empty()) {
            nb.add(blank_record());
        }
        nb
    }

    fn order(&self) -> Vec<String> {
        self.entries.with_untracked(|es| es.iter().map(|e| e.id.clone()).collect())
    }

    /// Adds a design, opens it and saves it.
    pub fn add(&self, record: DesignRecord) -> String {
        let id = new_id();
        let snapshot = snapshot_of(&record);
        self.entries.update(|es| {
            es.push(Entry { id: id.clone(), revision: 0, saved_at_ms: now_ms(), record, snapshot })
        });
        self.current.set(Some(id.clone()));
        self.persist(&id);
        id
    }

    /// Applies an edit to the open design, recomputes its snapshot and saves it.
    pub fn edit(&self, f: impl FnOnce(&mut DesignRecord)) {
        let Some(id) = self.current.get_untracked() else { return };
        self.entries.update(|es| {
            if let Some(e) = es.iter_mut().find(|e| e.id == id) {
                f(&mut e.record);
                e.snapshot = snapshot_of(&e.record);
                e.saved_at_ms = now_ms();
            }
        });
        self.persist(&id);
    }

    /// Reads the open design's record.
    pub fn with_current<R>(&self, f: impl FnOnce(&DesignRecord) -> R) -> Option<R> {
        let id = self.current.get()?;
        self.entries.with(|es| es.iter().find(|e| e.id == id).map(|e| f(&e.record)))
    }

    /// Writes one design to storage, reporting failures in the banner.
    pub fn persist(&self, id: &str) {
        if !self.persistent.get_untracked() {
            return;
        }
        let order = self.order();
        let Some(entry) = self.entries.with_untracked(|es| es.iter().find(|e| e.id == id).cloned()) else { return };
        match storage::save(&entry, &order) {
            Ok(rev) => self.entries.update(|es| {
                if let Some(e) = es.iter_mut().find(|e| e.id == id) {
                    e.revision = rev;
                }
            }),
            Err(SaveError::Conflict { theirs }) => self.banner.set(Some(format!(
                "\"{}\" was changed in another tab (revision {theirs}). Your edits here were not saved over it: reload to see theirs, or duplicate this design to keep yours.",
                entry.record.name
            ))),
            Err(SaveError::Failed(e)) => self.banner.set(Some(format!(
                "{e}. The page keeps working in memory; export designs you want to keep."
            ))),
        }
    }
}
