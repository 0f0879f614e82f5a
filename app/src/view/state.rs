//! The notebook's reactive state and the one place where edits are applied and saved.

use super::incoming::Incoming;
use crate::storage::{self, Entry, Kept, SaveError, SetAside, Snapshot, Studies};
use crate::unread::Unread;
use hysteron_core::analysis::{ImpedanceChoice, Targets};
use hysteron_core::device::Comparator;
use hysteron_core::record::DesignRecord;
use hysteron_core::topology::{inverting::InvertingSchmitt, Topology};
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
    /// Undo and redo stacks of the open design's records.
    pub history: RwSignal<History>,
    /// The last deleted design and its position, for undo.
    pub deleted: RwSignal<Option<(Entry, usize)>>,
    /// Text filter of the notebook list.
    pub filter: RwSignal<String>,
    /// The open design as it stood once edits paused (see [`Notebook::with_settled`]).
    pub settled: RwSignal<Option<DesignRecord>>,
    /// A design opened from a share link, shown read-only and not stored until the user keeps it.
    pub incoming: RwSignal<Incoming>,
    /// The open design's record. It follows `entries` and `current`, but a save (which changes
    /// only the revision and the snapshot) leaves it unchanged, so readers of the record do not
    /// run again then.
    record: Memo<Option<DesignRecord>>,
    /// Ids of designs edited but not yet written to storage: an edit is saved once the page has
    /// painted it (see [`Notebook::save_soon`]), and at once when the page is hidden or left.
    unsaved: StoredValue<Vec<String>>,
}

/// A study whose result is kept with its design (see [`storage::Studies`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Study {
    /// Monte Carlo: depends on the circuit and the tolerance settings.
    MonteCarlo,
    /// Signal test: depends on the circuit and the signal settings.
    Signal,
    /// Standard-value search: depends on the targets, the search settings, the topology and every
    /// value of the circuit but its resistors (picking a found set leaves the list current).
    Search,
}

/// The inputs a study's result depends on, as JSON text: the result is current while the open
/// design gives the same text. Settings left at their defaults read the same as written defaults.
pub fn study_inputs(study: Study, r: &DesignRecord) -> String {
    let v = match study {
        Study::MonteCarlo => serde_json::to_value((&r.circuit, r.tolerance.clone().unwrap_or_default())),
        Study::Signal => serde_json::to_value((&r.circuit, &r.signal)),
        Study::Search => {
            use hysteron_core::topology::{Circuit, ParameterKind};
            let fixed: Vec<(String, f64)> = r
                .circuit
                .parameters()
                .into_iter()
                .filter(|p| p.kind != ParameterKind::Resistor)
                .map(|p| (p.id, p.value))
                .collect();
            serde_json::to_value((&r.targets, r.search.clone().unwrap_or_default(), r.circuit.name(), fixed, &r.checks))
        }
    };
    v.map(|v| v.to_string()).unwrap_or_default()
}

/// A kept study result as the page shows it: the result, and whether the design still gives the
/// inputs it was computed from.
#[derive(Debug, Clone, PartialEq)]
pub struct Shown<T> {
    /// The result.
    pub result: T,
    /// How long the run took, milliseconds.
    pub elapsed_ms: f64,
    /// False once an edit changed the study's inputs: the result is out of date.
    pub current: bool,
}

/// Undo/redo history of one design. Edits closer together than [`History::MERGE_MS`] on the same
/// field merge into one step, so typing "4k7" is one undo step, not three.
#[derive(Debug, Clone, Default)]
pub struct History {
    /// Id of the design this history belongs to.
    pub id: String,
    /// Earlier states, newest last.
    pub undo: Vec<DesignRecord>,
    /// States undone, newest last.
    pub redo: Vec<DesignRecord>,
    last_key: String,
    last_ms: f64,
}

impl History {
    /// Edits within this many milliseconds on the same field merge into one undo step.
    pub const MERGE_MS: f64 = 800.0;
    /// The most steps kept.
    pub const LIMIT: usize = 200;
}

/// The longest an edit waits to be written to storage when no animation frame comes (a hidden
/// tab), milliseconds.
const SAVE_WITHIN_MS: i32 = 100;

/// Milliseconds since the Unix epoch.
pub fn now_ms() -> f64 {
    js_sys::Date::now()
}

/// A fresh id that sorts by creation time.
pub fn new_id() -> String {
    format!("d{:x}{:04x}", now_ms() as u64, (js_sys::Math::random() * 65535.0) as u32)
}

/// Computes what is kept beside a design when it is saved (see [`hysteron_core::overview::snapshot`]).
pub fn snapshot_of(record: &DesignRecord) -> Option<Snapshot> {
    hysteron_core::overview::snapshot(record)
}

/// The design a new blank notebook entry starts from, with targets equal to what it does now.
pub fn blank_record() -> DesignRecord {
    let mut r = DesignRecord::new(
        "Untitled design",
        Topology::Inverting(InvertingSchmitt::single_supply(100e3, 100e3, 100e3, Comparator::ideal(5.0))),
    );
    r.targets = Some(starting_targets(&r));
    r
}

/// Anchor resistor of targets that start from a design's present thresholds, ohms (a common
/// impedance level for signal dividers; common practice).
pub const STARTING_ANCHOR_OHM: f64 = 100e3;

/// Targets for a design that has none: its present VT+ and VT− (as `core` computes them), so the
/// target fields never show numbers the design has nothing to do with; VT+ 3 V and VT− 2 V only
/// when its thresholds cannot be computed.
pub fn starting_targets(r: &DesignRecord) -> Targets {
    let (vt_upper_v, vt_lower_v) = hysteron_core::overview::thresholds(&r.circuit)
        .map(|t| (t.vt_upper_v, t.vt_lower_v))
        .unwrap_or((3.0, 2.0));
    Targets { vt_upper_v, vt_lower_v, impedance: ImpedanceChoice::AnchorOhm(STARTING_ANCHOR_OHM) }
}

impl Notebook {
    /// Loads the notebook from storage; problems become messages, never a dead page.
    pub fn load() -> Self {
        let loaded = storage::load();
        // Reopen what this tab showed before a reload, else the design edited last.
        let view = storage::remembered_view();
        let current = view
            .open
            .filter(|id| loaded.entries.iter().any(|e| &e.id == id))
            .or_else(|| {
                loaded.entries.iter().max_by(|a, b| a.saved_at_ms.total_cmp(&b.saved_at_ms)).map(|e| e.id.clone())
            });
        let incoming = super::incoming::incoming();
        let banner = match (&loaded.unavailable, &loaded.read_only) {
            (Some(e), _) => Some(format!(
                "Saved designs cannot be read in this browser ({e}). Any designs stored here are left untouched and are not shown below; this page works in memory only and saves nothing. Reload to try again, and export designs you want to keep."
            )),
            (None, Some(e)) => Some(format!(
                "Local storage refuses writes ({e}). Your saved designs are shown as stored; new edits stay in this tab only until space is freed. Export designs you want to keep."
            )),
            (None, None) => None,
        };
        let entries = RwSignal::new(loaded.entries);
        let current = RwSignal::new(current);
        let record = Memo::new(move |_| {
            let id = current.get()?;
            entries.with(|es| es.iter().find(|e| e.id == id).map(|e| e.record.clone()))
        });
        let nb = Notebook {
            entries,
            current,
            record,
            unsaved: StoredValue::new(Vec::new()),
            set_aside: RwSignal::new(loaded.set_aside),
            banner: RwSignal::new(banner),
            persistent: RwSignal::new(loaded.unavailable.is_none()),
            history: RwSignal::new(History::default()),
            deleted: RwSignal::new(None),
            filter: RwSignal::new(String::new()),
            settled: RwSignal::new(None),
            incoming: RwSignal::new(incoming),
        };
        // An empty notebook starts with a blank design, unless a shared design is being shown:
        // opening a link stores nothing until the user keeps it.
        if nb.entries.with_untracked(|e| e.is_empty()) && !matches!(nb.incoming.get_untracked(), Incoming::Design(_)) {
            nb.add(blank_record());
        }
        nb.keep_view(view.scroll_y);
        nb.save_on_leave();
        nb
    }

    /// Writes pending edits when the page is hidden or left (a reload, a closed tab, another
    /// app in front), so an edit made just before is never lost.
    fn save_on_leave(&self) {
        let nb = *self;
        let hide = window_event_listener_untyped("pagehide", move |_| nb.save_pending());
        let unload = window_event_listener_untyped("beforeunload", move |_| nb.save_pending());
        let d = leptos::prelude::document();
        let cb = wasm_bindgen::closure::Closure::<dyn FnMut()>::new(move || nb.save_pending());
        let _ = d.add_event_listener_with_callback("visibilitychange", wasm_bindgen::JsCast::unchecked_ref(cb.as_ref()));
        // The notebook lives as long as the page: this listener is never removed.
        cb.forget();
        on_cleanup(move || {
            hide.remove();
            unload.remove();
        });
    }

    /// Marks a design for saving once the page has painted the edit: after the next animation
    /// frame (or a short timer, where frames do not run, as in a hidden tab), on a task of its
    /// own. Several edits before then are saved once.
    pub fn save_soon(&self, id: &str) {
        let mut first = false;
        self.unsaved.update_value(|u| {
            first = u.is_empty();
            if !u.iter().any(|x| x == id) {
                u.push(id.to_string());
            }
        });
        if !first {
            return;
        }
        let nb = *self;
        crate::tick::after_paint(SAVE_WITHIN_MS, move || nb.save_pending());
    }

    /// Writes every edit not yet saved (nothing when there is none).
    pub fn save_pending(&self) {
        let ids = self.unsaved.try_update_value(std::mem::take).unwrap_or_default();
        for id in ids {
            self.persist_now(&id, true);
        }
    }

    /// Remembers the open design and the scroll position for a reload of this tab, and brings
    /// the scroll position of the last visit back once the page has drawn.
    fn keep_view(&self, scroll_y: f64) {
        let current = self.current;
        let restored = StoredValue::new(false);
        let remember = move || {
            let y = web_sys::window().and_then(|w| w.scroll_y().ok()).unwrap_or(0.0);
            storage::remember_view(&storage::View { open: current.get_untracked(), scroll_y: y });
        };
        // Read the scroll position once the newly opened design has painted: read at once, it
        // forced a layout of the whole new design (9 ms of a 68 ms task in a CPU profile).
        Effect::new(move |_| {
            current.track();
            if restored.get_value() {
                crate::tick::after_paint(SAVE_WITHIN_MS, remember);
            }
        });
        if let Some(h) = web_sys::window().and_then(|w| w.history().ok()) {
            // The page puts the scroll position back itself, after its content is drawn.
            let _ = js_sys::Reflect::set(&h, &"scrollRestoration".into(), &"manual".into());
        }
        // The page's height settles over a few frames (plots, fonts): try for up to a second.
        fn restore(y: f64, tries: u32, done: StoredValue<bool>) {
            let Some(w) = web_sys::window() else { return };
            w.scroll_to_with_x_and_y(0.0, y);
            let now = w.scroll_y().unwrap_or(0.0);
            if (now - y).abs() < 2.0 || tries == 0 {
                done.set_value(true);
            } else {
                crate::tick::after_ms(50, move || restore(y, tries - 1, done));
            }
        }
        if scroll_y > 0.0 {
            crate::tick::after_ms(0, move || restore(scroll_y, 20, restored));
        } else {
            restored.set_value(true);
        }
        let pending = StoredValue::new(false);
        let on_scroll = move || {
            if !restored.get_value() || pending.get_value() {
                return;
            }
            pending.set_value(true);
            crate::tick::after_ms(150, move || {
                pending.set_value(false);
                remember();
            });
        };
        let scroll = window_event_listener_untyped("scroll", move |_| on_scroll());
        let hide = window_event_listener_untyped("pagehide", move |_| if restored.get_value() { remember() });
        on_cleanup(move || {
            scroll.remove();
            hide.remove();
        });
    }

    /// A name no design in the notebook has: `name` itself when free, else `name (2)`, `name (3)`…
    /// (a name that already ends in a number in brackets counts on from that number).
    pub fn unique_name(&self, name: &str) -> String {
        self.entries.with_untracked(|es| {
            let taken = |n: &str| es.iter().any(|e| e.record.name == n);
            if !taken(name) {
                return name.to_string();
            }
            let (base, from) = match name.strip_suffix(')').and_then(|s| s.rsplit_once(" (")) {
                Some((b, n)) if n.parse::<u32>().is_ok_and(|n| n >= 2) => (b.to_string(), n.parse::<u32>().unwrap_or(1) + 1),
                _ => (name.to_string(), 2),
            };
            (from..).map(|i| format!("{base} ({i})")).find(|n| !taken(n)).unwrap_or_else(|| name.to_string())
        })
    }

    /// Adds a design under a name no other design has (an imported or kept design), opens it and
    /// saves it.
    pub fn add_unique(&self, mut record: DesignRecord) -> String {
        record.name = self.unique_name(&record.name);
        self.add(record)
    }

    /// The kept result of a study of the open design, and whether it is still current.
    /// (Generic over the result's type so that reading it happens in the piece of the page that
    /// shows the study; see [`crate::unread`].)
    pub fn study<T: Clone + serde::de::DeserializeOwned>(&self, study: Study, pick: fn(&Studies) -> &Option<Kept<Unread<T>>>) -> Option<Shown<T>> {
        let id = self.current.get()?;
        self.entries.with(|es| {
            let e = es.iter().find(|e| e.id == id)?;
            let k = pick(&e.studies).as_ref()?;
            let result = k.result.read()?.clone();
            Some(Shown { result, elapsed_ms: k.elapsed_ms, current: k.inputs == study_inputs(study, &e.record) })
        })
    }

    /// Keeps a study's result with the design `id`, computed from `inputs` (taken with
    /// [`study_inputs`] when the run started), and saves it. The design's edit time is unchanged.
    pub fn keep_study(&self, id: &str, put: impl FnOnce(&mut Studies)) {
        let mut found = false;
        self.entries.update(|es| {
            if let Some(e) = es.iter_mut().find(|e| e.id == id) {
                put(&mut e.studies);
                found = true;
            }
        });
        if found {
            self.persist(id);
        }
    }

    /// Whether the open design has an edit to undo.
    pub fn can_undo(&self) -> bool {
        let id = self.current.get();
        self.history.with(|h| Some(&h.id) == id.as_ref() && !h.undo.is_empty())
    }

    /// Whether the open design has an undone edit to redo.
    pub fn can_redo(&self) -> bool {
        let id = self.current.get();
        self.history.with(|h| Some(&h.id) == id.as_ref() && !h.redo.is_empty())
    }

    fn order(&self) -> Vec<String> {
        self.entries.with_untracked(|es| es.iter().map(|e| e.id.clone()).collect())
    }

    /// Adds a design, opens it and saves it.
    pub fn add(&self, record: DesignRecord) -> String {
        let id = new_id();
        let snapshot = snapshot_of(&record);
        self.entries.update(|es| {
            es.push(Entry { id: id.clone(), revision: 0, saved_at_ms: now_ms(), record, snapshot, studies: Studies::default() })
        });
        self.current.set(Some(id.clone()));
        self.persist(&id);
        id
    }

    /// Applies an edit to the open design, records it for undo, recomputes its snapshot and saves it.
    /// `key` names what was edited, so that quick successive edits of one field merge into one step.
    pub fn edit_keyed(&self, key: &str, f: impl FnOnce(&mut DesignRecord)) {
        let Some(id) = self.current.get_untracked() else { return };
        let Some(before) = self.entries.with_untracked(|es| es.iter().find(|e| e.id == id).map(|e| e.record.clone()))
        else {
            return;
        };
        let mut after = before.clone();
        f(&mut after);
        if after == before {
            return;
        }
        self.history.update(|h| {
            if h.id != id {
                *h = History { id: id.clone(), ..History::default() };
            }
            let now = now_ms();
            let merge = !key.is_empty() && h.last_key == key && now - h.last_ms < History::MERGE_MS && !h.undo.is_empty();
            if !merge {
                h.undo.push(before);
                if h.undo.len() > History::LIMIT {
                    h.undo.remove(0);
                }
            }
            h.redo.clear();
            h.last_key = key.to_string();
            h.last_ms = now;
        });
        self.replace_current(after);
    }

    /// Applies an edit that never merges with the previous one.
    pub fn edit(&self, f: impl FnOnce(&mut DesignRecord)) {
        self.edit_keyed("", f)
    }

    fn replace_current(&self, record: DesignRecord) {
        let Some(id) = self.current.get_untracked() else { return };
        // The snapshot (the figures kept for the bench) is computed when the design is saved,
        // after the edit is painted; until then the design has none.
        self.entries.update(|es| {
            if let Some(e) = es.iter_mut().find(|e| e.id == id) {
                e.snapshot = None;
                e.record = record;
                e.saved_at_ms = now_ms();
            }
        });
        self.save_soon(&id);
    }

    /// Steps the open design back one edit (Ctrl+Z).
    pub fn undo(&self) {
        let Some(id) = self.current.get_untracked() else { return };
        let Some(now) = self.with_current_untracked(|r| r.clone()) else { return };
        let mut prev = None;
        self.history.update(|h| {
            if h.id == id {
                prev = h.undo.pop();
                if prev.is_some() {
                    h.redo.push(now);
                    h.last_key.clear();
                }
            }
        });
        if let Some(r) = prev {
            self.replace_current(r);
        }
    }

    /// Re-applies an undone edit (Ctrl+Shift+Z or Ctrl+Y).
    pub fn redo(&self) {
        let Some(id) = self.current.get_untracked() else { return };
        let Some(now) = self.with_current_untracked(|r| r.clone()) else { return };
        let mut next = None;
        self.history.update(|h| {
            if h.id == id {
                next = h.redo.pop();
                if next.is_some() {
                    h.undo.push(now);
                    h.last_key.clear();
                }
            }
        });
        if let Some(r) = next {
            self.replace_current(r);
        }
    }

    /// Reads the open design as it stood once typing paused. The slower studies (tolerance tables,
    /// part list, schematic, cautions) follow this copy, so each keystroke only recomputes the
    /// results and the transfer curve.
    pub fn with_settled<R>(&self, f: impl FnOnce(&DesignRecord) -> R) -> Option<R> {
        self.settled.with(|r| r.as_ref().map(f))
    }

    /// Reads the open design's whole notebook entry (record, snapshot, revision).
    pub fn with_current_entry<R>(&self, f: impl FnOnce(&Entry) -> R) -> Option<R> {
        let id = self.current.get()?;
        self.entries.with(|es| es.iter().find(|e| e.id == id).map(f))
    }

    /// Reads the open design's record without tracking.
    pub fn with_current_untracked<R>(&self, f: impl FnOnce(&DesignRecord) -> R) -> Option<R> {
        let id = self.current.get_untracked()?;
        self.entries.with_untracked(|es| es.iter().find(|e| e.id == id).map(|e| f(&e.record)))
    }

    /// Opens a design.
    pub fn open(&self, id: &str) {
        self.current.set(Some(id.to_string()));
    }

    /// Copies a design under a new name and opens the copy.
    pub fn duplicate(&self, id: &str) {
        let Some(mut record) = self.entries.with_untracked(|es| es.iter().find(|e| e.id == id).map(|e| e.record.clone()))
        else {
            return;
        };
        record.name = self.unique_name(&format!("{} (copy)", record.name));
        self.add(record);
    }

    /// Deletes a design; it can be brought back with [`Notebook::undo_delete`] until the next delete.
    pub fn delete(&self, id: &str) {
        let mut removed = None;
        self.entries.update(|es| {
            if let Some(i) = es.iter().position(|e| e.id == id) {
                removed = Some((es.remove(i), i));
            }
        });
        let Some((entry, index)) = removed else { return };
        if self.persistent.get_untracked() {
            match storage::remove(&entry.id, entry.revision, &self.order()) {
                Ok(()) => {}
                Err(SaveError::Conflict { theirs }) => {
                    // Another tab saved a newer version: it is not deleted; show theirs in its place.
                    let shown = match storage::read(&entry.id) {
                        Some(Ok(t)) => t,
                        _ => entry.clone(),
                    };
                    let name = shown.record.name.clone();
                    self.entries.update(|es| es.insert(index.min(es.len()), shown));
                    self.banner.set(Some(format!(
                        "\"{name}\" was not deleted: another tab saved a newer version (revision {theirs}), shown here now. Delete it again if you still want it gone."
                    )));
                    return;
                }
                Err(SaveError::Failed(e)) => self.banner.set(Some(format!("{e}. The page keeps working in memory."))),
            }
        }
        if self.current.get_untracked().as_deref() == Some(id) {
            let next = self.entries.with_untracked(|es| es.get(index.min(es.len().saturating_sub(1))).map(|e| e.id.clone()));
            self.current.set(next);
        }
        self.deleted.set(Some((entry, index)));
    }

    /// Brings back the last deleted design at its old place.
    pub fn undo_delete(&self) {
        let Some((mut entry, index)) = self.deleted.get_untracked() else { return };
        self.deleted.set(None);
        entry.revision = 0;
        let id = entry.id.clone();
        self.entries.update(|es| {
            let i = index.min(es.len());
            es.insert(i, entry);
        });
        self.current.set(Some(id.clone()));
        self.persist(&id);
    }

    /// Takes in a change another tab made to storage (the `storage` event).
    pub fn external_change(&self, key: &str, new_value: Option<String>) {
        let Some(id) = key.strip_prefix("hysteron/design/") else { return };
        // An edit of this tab not yet written goes first, so a conflict is seen and both are kept.
        if self.is_unsaved(id) {
            self.persist(id);
        }
        match new_value {
            None => {
                if self.current.get_untracked().as_deref() != Some(id) {
                    self.entries.update(|es| es.retain(|e| e.id != id));
                }
            }
            Some(text) => match storage::parse_stored(key, &text) {
                Ok(theirs) => {
                    let open = self.current.get_untracked().as_deref() == Some(id);
                    let mut known = false;
                    self.entries.update(|es| match es.iter_mut().find(|e| e.id == id) {
                        Some(e) => {
                            known = true;
                            if theirs.revision > e.revision {
                                *e = theirs.clone();
                            }
                        }
                        None => es.push(theirs.clone()),
                    });
                    if known && open {
                        self.banner.set(Some(format!(
                            "\"{}\" was changed in another tab; this tab now shows that version.",
                            theirs.record.name
                        )));
                    }
                }
                Err(a) => self.set_aside.update(|s| {
                    s.retain(|x| x.key != a.key);
                    s.push(a);
                }),
            },
        }
    }

    /// Reads the open design's record.
    pub fn with_current<R>(&self, f: impl FnOnce(&DesignRecord) -> R) -> Option<R> {
        self.record.with(|r| r.as_ref().map(f))
    }

    /// Whether an edit of the design `id` waits to be saved (its snapshot is not computed yet).
    pub fn is_unsaved(&self, id: &str) -> bool {
        self.unsaved.with_value(|u| u.iter().any(|x| x == id))
    }

    /// A save refused because another tab saved a newer revision: their version takes this
    /// design's place and this tab's version is kept beside it as a new design (saved at once),
    /// so neither edit is lost; the banner says so.
    fn keep_conflict_copy(&self, ours: Entry, theirs_revision: u64) {
        let id = ours.id.clone();
        let theirs = storage::read(&id);
        let index = self.entries.with_untracked(|es| es.iter().position(|e| e.id == id)).unwrap_or(0);
        let their_name = match &theirs {
            Some(Ok(t)) => t.record.name.clone(),
            _ => ours.record.name.clone(),
        };
        self.entries.update(|es| match theirs {
            Some(Ok(t)) => {
                if let Some(e) = es.iter_mut().find(|e| e.id == id) {
                    *e = t;
                }
            }
            // Theirs cannot be read here (damaged or newer format): it stays in storage untouched
            // and is listed with the set-aside items on the next load; this tab's copy follows.
            _ => es.retain(|e| e.id != id),
        });
        let copy_id = new_id();
        let mut record = ours.record;
        record.name = format!("{} (this tab's version)", record.name);
        let copy_name = record.name.clone();
        let copy = Entry { id: copy_id.clone(), revision: 0, saved_at_ms: now_ms(), record, snapshot: ours.snapshot, studies: ours.studies };
        self.entries.update(|es| {
            let i = (index + 1).min(es.len());
            es.insert(i, copy);
        });
        if self.current.get_untracked().as_deref() == Some(id.as_str()) {
            self.current.set(Some(copy_id.clone()));
        }
        self.persist(&copy_id);
        let saved = self.entries.with_untracked(|es| es.iter().any(|e| e.id == copy_id && e.revision > 0));
        self.banner.set(Some(if saved {
            format!(
                "\"{their_name}\" was changed in another tab at the same time (revision {theirs_revision}). Both versions are kept: theirs as \"{their_name}\", this tab's as \"{copy_name}\", which is open now."
            )
        } else {
            format!(
                "\"{their_name}\" was changed in another tab at the same time (revision {theirs_revision}). This tab's version is open as \"{copy_name}\" but could not be saved: export it to keep it."
            )
        }));
    }

    /// Writes one design to storage now (with any edit of it still waiting), reporting failures
    /// in the banner. Without storage (the page works in memory) only its snapshot is brought up to date.
    pub fn persist(&self, id: &str) {
        let waiting = self.unsaved.try_update_value(|u| {
            let before = u.len();
            u.retain(|x| x != id);
            u.len() != before
        });
        self.persist_now(id, waiting.unwrap_or(false));
    }

    /// Writes one design; `edited`: its snapshot is computed first (it was edited since the last save).
    fn persist_now(&self, id: &str, edited: bool) {
        if edited {
            let snapshot = self.entries.with_untracked(|es| es.iter().find(|e| e.id == id).map(|e| snapshot_of(&e.record)));
            if let Some(snapshot) = snapshot {
                self.entries.update(|es| {
                    if let Some(e) = es.iter_mut().find(|e| e.id == id) {
                        e.snapshot = snapshot;
                    }
                });
            }
        }
        if !self.persistent.get_untracked() {
            return;
        }
        let order = self.order();
        let Some(entry) = self.entries.with_untracked(|es| es.iter().find(|e| e.id == id).cloned()) else { return };
        match storage::save(&entry, &order) {
            // Only the revision changes: nothing on the page shows it, so nothing runs again.
            Ok(rev) => self.entries.update_untracked(|es| {
                if let Some(e) = es.iter_mut().find(|e| e.id == id) {
                    e.revision = rev;
                }
            }),
            Err(SaveError::Conflict { theirs }) => self.keep_conflict_copy(entry, theirs),
            Err(SaveError::Failed(e)) => self.banner.set(Some(format!(
                "{e}. The page keeps working in memory; export designs you want to keep."
            ))),
        }
    }
}
