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
use crate::piece::{PieceMissing, PieceTrouble};
use state::Notebook;

/// How long edits must pause before the slower sections recompute, milliseconds.
const SETTLE_MS: i32 = 120;

/// Where no frame comes (a hidden tab), how long [`Deferred`] waits before building, milliseconds.
const LATER_FALLBACK_MS: i32 = 50;

/// The parts of the open design built just after its first paint ([`Deferred`]): not needed to
/// show and edit the design, so their code is kept out of the page's first module. Besides the
/// studies, the part list, the share section and the print sheet, that is the schematic (its drawing
/// code), the parts section (synthesis and the standard-value search), the results' windows job
/// (the code that talks to the compute workers) and a shared link's read-only view: first module
/// 632 → 498 KB gzip (DEVELOPERS.md, "Build tools").
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Later {
    /// The editor itself ([`App`]): everything that reads, checks, recomputes and saves designs.
    /// Until it arrives the page shows the notebook as last saved (`crate::glance`).
    Notebook,
    InputNetwork,
    Tolerance,
    Temperature,
    Dynamics,
    Signal,
    Application,
    PartList,
    Share,
    Sheet,
    Schematic,
    WindowsJob,
    Parts,
    SharedDesign,
}

impl Later {
    /// Whether the section takes a place on the page of its own (the windows job only fills the
    /// results' figures; a shared link's view shows only when a link was opened).
    fn has_place(self) -> bool {
        !matches!(self, Later::WindowsJob | Later::SharedDesign)
    }

    /// Whether a line saying the section is still loading stands in its place until it arrives:
    /// every section with a place on screen (the sheet shows only in print).
    fn waits_in_place(self) -> bool {
        self.has_place() && !matches!(self, Later::Sheet | Later::Notebook)
    }

    /// Whether its code is fetched only once the page has painted: every section but the editor,
    /// whose fetch starts while the first module mounts (a piece downloads and compiles off the
    /// page's thread, and an editor that arrives before the first frame only spares the user the
    /// glance).
    fn after_first_paint(self) -> bool {
        self != Later::Notebook
    }
}


/// Builds the view of `which` (see [`Later`]). In the split build (`--cfg hysteron_split`, set by
/// `app/build.rs` for `cargo xtask build`) this code and all it alone reaches go into one module of
/// their own, fetched on the first call (wasm-split through Leptos's re-export; `fallible`: a failed
/// fetch is an error, not a panic, which would stop the whole page); otherwise (unit tests) a plain
/// call. One piece rather than one per section: every section is built right after the first paint
/// anyway, and per-section pieces cut their shared code into 130 modules, 568 KB gzip in all,
/// against 453 KB for this piece and the one it shares with `jobs::run_on_page_piece`.
#[cfg_attr(hysteron_split, leptos::wasm_split::wasm_split(later_views, wasm_split_path = leptos::wasm_split, fallible))]
fn build_later(which: Later) -> Result<AnyView, PieceMissing> {
    Ok(match which {
        // The editor has a piece of its own: `load_later` asks `build_editor` for it in the split
        // build; the one-module build comes here.
        #[cfg(not(hysteron_split))]
        Later::Notebook => build_editor()?,
        #[cfg(hysteron_split)]
        Later::Notebook => ().into_any(),
        Later::InputNetwork => view! { <input_network::InputNetworkSection /> }.into_any(),
        Later::Tolerance => view! { <tolerance::ToleranceSection /> }.into_any(),
        Later::Temperature => view! { <temperature::TemperatureSection /> }.into_any(),
        Later::Dynamics => view! { <output_dynamics::OutputDynamicsSection /> }.into_any(),
        Later::Signal => view! { <signal::SignalSection /> }.into_any(),
        Later::Application => view! { <application::ApplicationSection /> }.into_any(),
        Later::PartList => view! { <partlist::PartListSection /> }.into_any(),
        Later::Share => view! { <share::ShareSection /> }.into_any(),
        Later::Sheet => view! { <sheet::DesignSheet /> }.into_any(),
        Later::Schematic => view! { <circuit::SchematicView /> }.into_any(),
        Later::WindowsJob => view! { <results::WindowsFollower /> }.into_any(),
        Later::Parts => view! { <parts::PartsSection /> }.into_any(),
        Later::SharedDesign => view! { <share::SharedDesign incoming={expect_context::<Notebook>().incoming} /> }.into_any(),
    })
}

/// Builds the editor ([`App`]). In the split build its code, and all that it alone reaches, is a
/// piece of its own (`editor`), fetched as soon as the page starts; the sections it builds after
/// its first paint are in [`build_later`]'s piece, fetched then. Two pieces rather than one: the
/// editor takes edits as soon as its own code has arrived, without waiting for every study's.
#[cfg_attr(hysteron_split, leptos::wasm_split::wasm_split(editor, wasm_split_path = leptos::wasm_split, fallible))]
fn build_editor() -> Result<AnyView, PieceMissing> {
    Ok(view! { <App /> }.into_any())
}

/// The view of `which`, once its code has arrived (see [`build_later`], [`build_editor`]).
async fn load_later(which: Later) -> Result<AnyView, PieceMissing> {
    #[cfg(hysteron_split)]
    return match which {
        Later::Notebook => build_editor().await,
        _ => build_later(which).await,
    };
    #[cfg(not(hysteron_split))]
    return build_later(which);
}

/// Builds the view `load` gives once the rest of the design has painted, each on a task of its own,
/// in this component's reactive owner (its context, its cleanup), once its code has arrived.
/// Building every study and section with the design made opening one a single task of 55–110 ms on
/// the test machine (long-task observer, four demos); built on the tasks right after, before the
/// first frame, they held back the first paint of a load with an emptied cache (first contentful
/// paint about 100 ms after the mount mark, about 78 ms once they waited; alternated runs).
#[component]
fn Deferred(
    /// The section.
    load: Later,
    /// Shown until it arrives instead of the loading line.
    #[prop(optional, into)]
    meanwhile: Option<ViewFn>,
) -> impl IntoView {
    let ready = RwSignal::new(false);
    let view = StoredValue::new_local(None::<AnyView>);
    let owner = Owner::current();
    let keeps_meanwhile = meanwhile.is_some();
    let start = move |f: Box<dyn FnOnce()>| {
        if load.after_first_paint() {
            crate::tick::after_paint(LATER_FALLBACK_MS, f)
        } else {
            f()
        }
    };
    start(Box::new(move || {
        let Some(owner) = owner else { return };
        owner.with(|| {
            leptos::task::spawn_local_scoped(async move {
                let v = match load_later(load).await {
                    Ok(v) => v,
                    Err(PieceMissing) => {
                        // Said once, at the top of the page ([`Root`]); each section with a place of
                        // its own points there, and what stood in its meanwhile stays (it says so).
                        if let Some(t) = use_context::<PieceTrouble>() {
                            t.0.try_set(true);
                        }
                        if keeps_meanwhile {
                            return;
                        }
                        if load.has_place() {
                            view! { <p class="error piece-missing">"Not loaded: see the message at the top of the page."</p> }.into_any()
                        } else {
                            ().into_any()
                        }
                    }
                };
                view.try_set_value(Some(v));
                ready.try_set(true);
            })
        });
    }));
    // Until then a line holds the section's place; the style sheet shows it only after a moment
    // (`.later-wait`), so a quick load never flashes it and a slow link does not leave a blank.
    move || {
        if ready.get() {
            view.try_update_value(|v| v.take()).flatten()
        } else if let Some(m) = &meanwhile {
            Some(m.run())
        } else if load.waits_in_place() {
            Some(view! { <p class="later-wait">"Loading this section…"</p> }.into_any())
        } else {
            None
        }
    }
}

/// A long study folded under one line: closed until the user opens it, so the design's inputs
/// stay short; what it holds is rendered (and kept) whether open or not, built just after the
/// rest of the design ([`Deferred`]).
#[component]
fn Study(
    /// Element id of the fold.
    id: &'static str,
    /// The study's name.
    title: &'static str,
    /// What it holds, in a few words.
    hint: &'static str,
    /// Its view.
    load: Later,
) -> impl IntoView {
    view! {
        <details class="study" id=id>
            <summary><span class="study-title">{title}</span><span class="study-hint">{hint}</span></summary>
            <Deferred load />
        </details>
    }
}

/// The whole page: the header, and the editor ([`App`]) once its piece has arrived; until then
/// the notebook as last saved (`crate::glance`). In the page built in pieces the first module holds
/// only this, the glance and what they share (DEVELOPERS.md, "Loading in pieces").
#[component]
pub fn Root() -> impl IntoView {
    let trouble = PieceTrouble(RwSignal::new(false));
    provide_context(trouble);
    view! {
        <header class="top">
            <h1><span class="mark" aria-hidden="true"></span>"Hysteron"</h1>
            <p class="tagline">"Two-threshold switching circuits, designed and checked"</p>
        </header>
        {move || trouble.0.get().then(|| view! {
            <div class="banner" role="alert" id="piece-missing">"Part of this page could not be loaded (no network, or the page was updated since it opened), so some of it is missing. Reload the page to get it; your designs are kept."</div>
        })}
        <Deferred load=Later::Notebook meanwhile=|| view! { <crate::glance::GlanceView /> } />
    }
}

/// The editor: the notebook list and the open design, every section of it.
#[component]
fn App() -> impl IntoView {
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
    // Lets browser timing runs read when the page could be edited (performance.getEntriesByName):
    // the editor's view is in the page when its first effect runs.
    Effect::new(|_| {
        if let Some(p) = web_sys::window().and_then(|w| w.performance()) {
            let _ = p.mark("hysteron-editable");
        }
    });
    // Start the compute workers in the background, after the page has shown.
    crate::tick::after_ms(200, || crate::jobs::prewarm(crate::jobs::pool_size()));
    view! {
        {move || nb.banner.get().map(|b| view! { <div class="banner" role="status" id="storage-banner">{b}</div> })}
        <Deferred load=Later::SharedDesign />
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
                                <Deferred load=Later::Schematic />
                            </aside>
                            <div class="design-inputs">
                                <purpose::PurposeSection />
                                <circuit::CircuitSection />
                                <Deferred load=Later::Parts />
                                <Study id="fold-input-network" title="Input network" hint="dropper, series resistor, clamp, RC filter; thresholds at the field terminal" load=Later::InputNetwork />
                                <Study id="fold-tolerance" title="Tolerance" hint="worst case, GUM, error budget, Monte Carlo" load=Later::Tolerance />
                                <Study id="fold-temperature" title="Temperature" hint="VT+ and VT− over the operating range, drift in mV/K" load=Later::Temperature />
                                <Study id="fold-dynamics" title="Output dynamics and power-up" hint="edges at the load, speed-up capacitor, state after a supply ramp" load=Later::Dynamics />
                                <Study id="fold-signal" title="Signal test" hint="the signal the circuit sees, noise, false edges" load=Later::Signal />
                                <Study id="fold-application" title="Oscillator and debouncer" hint="RC timing on the thresholds" load=Later::Application />
                                <Deferred load=Later::PartList />
                                <Deferred load=Later::Share />
                            </div>
                        </div>
                    }.into_any()
                } else {
                    view! { <p class="empty">"No design open. Start one from the notebook."</p> }.into_any()
                }}
            </main>
        </div>
        <Deferred load=Later::Sheet />
    }
}
