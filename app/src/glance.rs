//! What the page shows before its editor arrives (DEVELOPERS.md, "Loading in pieces"): the saved
//! designs' names and, for the design this tab shows, the thresholds and transfer curve kept with
//! it at its last save (the storage snapshot, `core::overview::Snapshot`). Read straight from local
//! storage with a few plain fields, so the page's first module needs neither the design record's
//! reader nor the analysis; the editor (`view::App`), which reads, checks and recomputes every
//! design, replaces this view as soon as its piece has arrived. Nothing here can be edited, so no
//! keystroke can be lost meanwhile; a stored design this view cannot read is simply left out (the
//! editor reports it where it belongs).

use crate::storage::{design_key, remembered_view, scan_design_keys, INDEX_KEY};
use hysteron_core::overview::{key_line, summary_line};
use hysteron_core::safety::ARITHMETIC_ONLY;
use hysteron_core::topology::TransferCurve;
use leptos::html::Canvas;
use leptos::prelude::*;
use serde::Deserialize;

/// The few fields of a stored design (`storage::StoredDesign`) this view reads; the rest is
/// skipped unread.
#[derive(Debug, Clone, Deserialize)]
struct StoredGlance {
    id: String,
    #[serde(default)]
    saved_at_ms: f64,
    #[serde(default)]
    record: RecordGlance,
    #[serde(default)]
    snapshot: Option<SnapshotGlance>,
}

/// The design record's name.
#[derive(Debug, Clone, Default, Deserialize)]
struct RecordGlance {
    #[serde(default)]
    name: String,
}

/// VT+ and VT−, volts.
#[derive(Debug, Clone, Deserialize)]
struct PairGlance {
    vt_upper_v: f64,
    vt_lower_v: f64,
}

/// A safety caution's words (`core::safety::Caution`).
#[derive(Debug, Clone, Deserialize)]
struct CautionGlance {
    message: String,
}

/// The figures kept with a design at its last save (`core::overview::Snapshot`).
#[derive(Debug, Clone, Deserialize)]
struct SnapshotGlance {
    vt_upper_v: f64,
    vt_lower_v: f64,
    hysteresis_v: f64,
    curve: TransferCurve,
    #[serde(default)]
    field_terminal: Option<PairGlance>,
    #[serde(default)]
    cautions: Vec<CautionGlance>,
}

impl SnapshotGlance {
    /// The list's one-line summary, as the editor's list shows it (`core::overview::summary_line`).
    fn summary(&self) -> String {
        summary_line(self.vt_upper_v, self.vt_lower_v, self.field_terminal.as_ref().map(|t| (t.vt_upper_v, t.vt_lower_v)))
    }
}

/// One saved design as this view shows it.
#[derive(Debug, Clone)]
pub struct Glance {
    id: String,
    name: String,
    saved_at_ms: f64,
    snapshot: Option<SnapshotGlance>,
}

/// Reads one stored design's text; `None` when it cannot be read (the editor reports it).
fn read_one(text: &str) -> Option<Glance> {
    let s: StoredGlance = serde_json::from_str(text).ok()?;
    Some(Glance { id: s.id, name: s.record.name, saved_at_ms: s.saved_at_ms, snapshot: s.snapshot })
}

/// The saved designs in the notebook's order (designs stored under a key but missing from the
/// list follow, as the editor lists them), and the one this tab shows: the one it showed before a
/// reload, else the one edited last (the editor's rule, `state::Notebook::load`).
pub fn read_notebook() -> (Vec<Glance>, Option<String>) {
    let Some(storage) = web_sys::window().and_then(|w| w.local_storage().ok().flatten()) else {
        return (Vec::new(), None);
    };
    let mut ids: Vec<String> = storage
        .get_item(INDEX_KEY)
        .ok()
        .flatten()
        .and_then(|t| serde_json::from_str(&t).ok())
        .unwrap_or_default();
    for id in scan_design_keys() {
        if !ids.contains(&id) {
            ids.push(id);
        }
    }
    let designs: Vec<Glance> =
        ids.iter().filter_map(|id| storage.get_item(&design_key(id)).ok().flatten()).filter_map(|t| read_one(&t)).collect();
    let open = remembered_view()
        .open
        .filter(|id| designs.iter().any(|d| &d.id == id))
        .or_else(|| designs.iter().max_by(|a, b| a.saved_at_ms.total_cmp(&b.saved_at_ms)).map(|d| d.id.clone()));
    (designs, open)
}

/// The line of figures kept with a design, as its last save computed them (the key strip's words,
/// `core::overview::key_line`).
fn figures_line(s: &SnapshotGlance) -> String {
    key_line(s.vt_upper_v, s.vt_lower_v, s.hysteresis_v, s.field_terminal.as_ref().map(|t| (t.vt_upper_v, t.vt_lower_v)))
}

/// The page before its editor arrives: the notebook's names and the open design's figures and
/// transfer curve as last saved, under a line saying the editor is on its way. The style sheet
/// shows all but the header only after a moment (`.glance`), so a quick load goes straight from
/// the header to the editor.
#[component]
pub fn GlanceView() -> impl IntoView {
    let (designs, open) = read_notebook();
    let trouble = use_context::<crate::piece::PieceTrouble>();
    let shown = open.as_ref().and_then(|id| designs.iter().find(|d| &d.id == id)).cloned();
    let canvas: NodeRef<Canvas> = NodeRef::new();
    let curve = shown.as_ref().and_then(|d| d.snapshot.as_ref()).map(|s| s.curve.clone());
    Effect::new(move |_| {
        if let (Some(el), Some(c)) = (canvas.get(), curve.as_ref()) {
            let _ = crate::plot::draw_transfer(&el, c);
        }
    });
    let names = designs
        .iter()
        .map(|d| {
            let open = Some(&d.id) == open.as_ref();
            let summary = d.snapshot.as_ref().map(SnapshotGlance::summary);
            view! {
                <li class="design-item" class:open=open><span class="design-pick">
                    <span class="design-name">{d.name.clone()}</span>
                    {summary.map(|t| view! { <span class="design-meta">{t}</span> })}
                </span></li>
            }
        })
        .collect_view();
    let body = shown.map(|d| {
        let figures = d.snapshot.as_ref().map(figures_line);
        let has_curve = d.snapshot.is_some();
        let cautions: Vec<String> = d.snapshot.map(|s| s.cautions.into_iter().map(|c| c.message).collect()).unwrap_or_default();
        view! {
            <section class="card glance-card" aria-label="The open design as last saved">
                <h2 class="glance-name">{d.name}</h2>
                <p class="note">"As last saved; the editor rechecks every figure when it opens."</p>
                {figures.map(|f| view! { <p class="glance-figures" id="glance-figures">{f}</p> })}
                {(!cautions.is_empty()).then(|| view! {
                    <div class="caution" role="note" id="glance-cautions">
                        <strong>"Safety"</strong>
                        <ul>{cautions.into_iter().map(|c| view! { <li>{c}</li> }).collect_view()}</ul>
                        <p>{ARITHMETIC_ONLY}</p>
                    </div>
                })}
                {has_curve.then(|| view! {
                    <figure class="plot"><canvas node_ref=canvas role="img" aria-label="Transfer curve as last saved"></canvas></figure>
                })}
            </section>
        }
    });
    view! {
        <div class="layout glance" id="glance" aria-busy="true">
            <nav class="notebook" aria-label="Notebook of saved designs">
                <h2>"Notebook"</h2>
                <ul class="design-list">{names}</ul>
            </nav>
            <main class="design">
                {move || if trouble.is_some_and(|t| t.0.get()) {
                    view! { <p class="error glance-missing">"The editor could not be loaded: see the message at the top of the page. Below, your designs as last saved."</p> }.into_any()
                } else {
                    view! { <p class="later-wait glance-wait">"Opening the editor…"</p> }.into_any()
                }}
                {body}
            </main>
        </div>
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A stored design as `storage::save` writes it, with the snapshot `core::overview::snapshot`
    /// computes: the fields this view reads come back, the rest is skipped.
    #[test]
    fn a_stored_design_reads_back_its_name_and_figures() {
        let mut record = hysteron_core::record::DesignRecord::from_json(include_str!("../../tests/fixtures/records/inverting.json"))
            .expect("fixture reads");
        record.name = "Reed switch".into();
        let snapshot = hysteron_core::overview::snapshot(&record).expect("the default design computes");
        let text = serde_json::json!({
            "envelope_version": 1, "id": "d1", "revision": 3, "saved_at_ms": 12.5,
            "record": serde_json::to_value(&record).unwrap(), "snapshot": snapshot, "studies": {"anything": [1, 2]}
        })
        .to_string();
        let g = read_one(&text).expect("reads");
        assert_eq!((g.id.as_str(), g.name.as_str(), g.saved_at_ms), ("d1", "Reed switch", 12.5));
        let s = g.snapshot.expect("snapshot");
        assert_eq!((s.vt_upper_v, s.vt_lower_v), (snapshot.vt_upper_v, snapshot.vt_lower_v));
        assert_eq!(s.curve, snapshot.curve);
    }

    /// A battery monitor's snapshot keeps its cautions (`core::safety`), and the list's summary
    /// reads as the editor's (`core::overview::Snapshot::summary`).
    #[test]
    fn a_stored_snapshot_brings_its_cautions_and_summary() {
        let record = hysteron_core::record::DesignRecord::from_json(include_str!("../../tests/fixtures/records/supply_monitor.json"))
            .expect("fixture reads");
        let snapshot = hysteron_core::overview::snapshot(&record).expect("the fixture computes");
        let text = serde_json::json!({ "id": "b", "record": serde_json::to_value(&record).unwrap(), "snapshot": snapshot }).to_string();
        let s = read_one(&text).and_then(|g| g.snapshot).expect("reads");
        let want: Vec<String> = hysteron_core::safety::cautions(&record).into_iter().map(|c| c.message).collect();
        assert!(!want.is_empty(), "a supply monitor has the battery caution");
        assert_eq!(s.cautions.into_iter().map(|c| c.message).collect::<Vec<_>>(), want);
        let s = read_one(&text).and_then(|g| g.snapshot).expect("reads");
        assert_eq!(s.summary(), snapshot.summary());
    }

    #[test]
    fn damaged_text_is_left_out() {
        assert!(read_one("{\"id\": 3}").is_none());
        assert!(read_one("not json").is_none());
    }
}
