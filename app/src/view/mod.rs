//! The page's components. `App` owns the notebook state; the other modules render parts of it.

mod editor;
mod notebook;
mod results;
pub mod state;

use leptos::prelude::*;
use state::Notebook;

/// The whole page: header, notebook list, and the open design.
#[component]
pub fn App() -> impl IntoView {
    let nb = Notebook::load();
    provide_context(nb);
    view! {
        <header class="top">
            <h1><span class="mark" aria-hidden="true"></span>"Hysteron"</h1>
            <p class="tagline">"Two-threshold switching circuits, designed and checked"</p>
        </header>
        {move || nb.banner.get().map(|b| view! { <div class="banner" role="status" id="storage-banner">{b}</div> })}
        <div class="layout">
            <notebook::NotebookList />
            <main id="design" class="design">
                {move || if nb.current.get().is_some() {
                    view! { <editor::DesignEditor /> <results::Results /> }.into_any()
                } else {
                    view! { <p class="empty">"No design open. Start one from the notebook."</p> }.into_any()
                }}
            </main>
        </div>
    }
}
