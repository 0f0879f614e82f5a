//! The notebook list: saved designs, new design.

use super::state::{blank_record, Notebook};
use leptos::prelude::*;

/// The list of saved designs with a button for a new one.
#[component]
pub fn NotebookList() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    view! {
        <nav class="notebook" aria-label="Saved designs">
            <div class="notebook-head">
                <h2>"Notebook"</h2>
                <button id="new-design" on:click=move |_| { nb.add(blank_record()); }>"New design"</button>
            </div>
            <ul class="design-list">
                <For
                    each=move || nb.entries.get()
                    key=|e| (e.id.clone(), e.revision)
                    let:entry
                >
                    {
                        let id = entry.id.clone();
                        let id2 = id.clone();
                        let summary = entry
                            .snapshot
                            .as_ref()
                            .map(|s| format!("{:.3} V / {:.3} V", s.vt_upper_v, s.vt_lower_v))
                            .unwrap_or_else(|| "no result".into());
                        view! {
                            <li class:open=move || nb.current.get().as_deref() == Some(id.as_str())>
                                <button class="design-pick" on:click=move |_| nb.current.set(Some(id2.clone()))>
                                    <span class="design-name">{entry.record.name.clone()}</span>
                                    <span class="design-meta">{entry.record.circuit.name()} " · " {summary}</span>
                                </button>
                            </li>
                        }
                    }
                </For>
            </ul>
            {move || {
                let aside = nb.set_aside.get();
                (!aside.is_empty()).then(|| view! {
                    <div class="set-aside" role="status">
                        <h3>"Set aside"</h3>
                        <ul>{aside.into_iter().map(|a| view! { <li><code>{a.key}</code>": "{a.message}</li> }).collect_view()}</ul>
                    </div>
                })
            }}
        </nav>
    }
}
