//! The page's components. `App` owns the notebook state; the other modules render parts of it.

mod application;
mod circuit;
mod incoming;
mod input_network;
mod notebook;
mod output_dynamics;
pub mod partlist;
mod parts;
pub mod progress;
mod share;
mod sheet;
mod purpose;
mod results;
mod search;
mod signal;
mod starters;
mod tolerance;
mod temperature;
pub mod state;

use leptos::prelude::*;
use state::Notebook;

/// How long edits must pause before the slower sections recompute, milliseconds.
const SETTLE_MS: i32 = 120;

/// Where no frame comes (a hidden tab), how long [`Later`] waits before building, milliseconds.
const LATER_FALLBACK_MS: i32 = 50;

/// Builds what it holds once the rest of the design has been painted, each `Later` on a task of its
/// own. Building every study and section with the design made opening one a single task of
/// 55–110 ms on the test machine (long-task observer, four demos); built on the tasks right after,
/// before the first frame, they held back the first paint of a load with an emptied cache (first
/// contentful paint about 100 ms after the mount mark, about 78 ms once they waited; alternated runs).
#[component]
fn Later(children: Children) -> impl IntoView {
    let shown = RwSignal::new(false);
    let kids = StoredValue::new_local(Some(children));
    crate::tick::after_paint(LATER_FALLBACK_MS, move || {
        shown.try_set(true);
    });
    move || shown.get().then(|| kids.try_update_value(|k| k.take()).flatten().map(|c| c()))
}

/// A long study folded under one line: closed until the user opens it, so the design's inputs
/// stay short; what it holds is rendered (and kept) whether open or not, built just after the
/// rest of the design ([`Later`]).
#[component]
fn Study(
    /// Element id of the fold.
    id: &'static str,
    /// The study's name.
    title: &'static str,
    /// What it holds, in a few words.
    hint: &'static str,
    children: Children,
) -> impl IntoView {
    view! {
        <details class="study" id=id>
            <summary><span class="study-title">{title}</span><span class="study-hint">{hint}</span></summary>
            <Later>{children()}</Later>
        </details>
    }
}

/// The whole page: header, notebook list, and the open design.
#[component]
pub fn App() -> impl IntoView {
    let nb = Notebook::load();
    provide_context(nb);
    provide_context(share::StyleChoice(RwSignal::new(hysteron_core::schematic::SymbolStyle::Iec60617)));
    let incoming = nb.incoming;
    // Copy the open design into `settled` once edits pause for a moment (immediately when another
    // design is opened), so the slower sections recompute once per pause, not once per keystroke.
    let settle_ticket = StoredValue::new(0u64);
    Effect::new(move |prev: Option<Option<String>>| {
        let id = nb.current.get();
        let record = nb.with_current(|r| r.clone());
        settle_ticket.update_value(|t| *t += 1);
        let ticket = settle_ticket.get_value();
        let switched = prev.as_ref() != Some(&id);
        if switched || nb.settled.with_untracked(|s| s.is_none()) {
            nb.settled.set(record);
        } else {
            crate::tick::after_ms(SETTLE_MS, move || {
                if settle_ticket.get_value() == ticket {
                    nb.settled.set(record);
                }
            });
        }
        id
    });
    // A link pasted into this tab changes only the fragment: read it again.
    let hash = window_event_listener_untyped("hashchange", move |_| incoming.set(share::incoming()));
    // Ctrl+Z / Ctrl+Shift+Z (and Ctrl+Y) step the open design's edits back and forward.
    let keys = window_event_listener(leptos::ev::keydown, move |ev| {
        let ctrl = ev.ctrl_key() || ev.meta_key();
        let key = ev.key().to_lowercase();
        if ctrl && key == "z" && !ev.shift_key() {
            ev.prevent_default();
            nb.undo();
        } else if ctrl && ((key == "z" && ev.shift_key()) || key == "y") {
            ev.prevent_default();
            nb.redo();
        }
    });
    // Another tab saved or deleted a design: take the change in instead of overwriting it later.
    let storage = window_event_listener(leptos::ev::storage, move |ev| {
        if let Some(key) = ev.key() {
            nb.external_change(&key, ev.new_value());
        }
    });
    on_cleanup(move || {
        keys.remove();
        hash.remove();
        storage.remove();
    });
    view! {
        <header class="top">
            <h1><span class="mark" aria-hidden="true"></span>"Hysteron"</h1>
            <p class="tagline">"Two-threshold switching circuits, designed and checked"</p>
        </header>
        {move || nb.banner.get().map(|b| view! { <div class="banner" role="status" id="storage-banner">{b}</div> })}
        <share::SharedDesign incoming />
        <div class="layout">
            <notebook::NotebookList />
            <main id="design" class="design">
                {move || if nb.current.get().is_some() {
                    let figures = results::Figures::new(nb);
                    view! {
                        <div class="design-grid">
                            <results::KeyStrip figures />
                            <aside class="design-view" aria-label="The design at a glance: results, transfer curve and schematic">
                                <results::Results figures />
                                <circuit::SchematicView />
                            </aside>
                            <div class="design-inputs">
                                <purpose::PurposeSection />
                                <circuit::CircuitSection />
                                <parts::PartsSection />
                                <Study id="fold-input-network" title="Input network" hint="dropper, series resistor, clamp, RC filter; thresholds at the field terminal">
                                    <input_network::InputNetworkSection />
                                </Study>
                                <Study id="fold-tolerance" title="Tolerance" hint="worst case, GUM, error budget, Monte Carlo">
                                    <tolerance::ToleranceSection />
                                </Study>
                                <Study id="fold-temperature" title="Temperature" hint="VT+ and VT− over the operating range, drift in mV/K">
                                    <temperature::TemperatureSection />
                                </Study>
                                <Study id="fold-dynamics" title="Output dynamics and power-up" hint="edges at the load, speed-up capacitor, state after a supply ramp">
                                    <output_dynamics::OutputDynamicsSection />
                                </Study>
                                <Study id="fold-signal" title="Signal test" hint="the signal the circuit sees, noise, false edges">
                                    <signal::SignalSection />
                                </Study>
                                <Study id="fold-application" title="Oscillator and debouncer" hint="RC timing on the thresholds">
                                    <application::ApplicationSection />
                                </Study>
                                <Later><partlist::PartListSection /></Later>
                                <Later><share::ShareSection /></Later>
                            </div>
                        </div>
                    }.into_any()
                } else {
                    view! { <p class="empty">"No design open. Start one from the notebook."</p> }.into_any()
                }}
            </main>
        </div>
        <sheet::DesignSheet />
    }
}
