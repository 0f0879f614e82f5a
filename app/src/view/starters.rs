//! New designs from a topology template or a demo scenario.

use super::state::Notebook;
use hysteron_core::catalog;
use leptos::prelude::*;

/// A picker that adds a design from a template or a demo scenario.
#[component]
pub fn StarterPicker() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let choice = RwSignal::new(String::from("demo:lathe-tachometer"));
    let add = move |_| {
        let key = choice.get_untracked();
        let starter = if let Some(k) = key.strip_prefix("demo:") {
            catalog::demos().into_iter().find(|s| s.key == k)
        } else if let Some(k) = key.strip_prefix("topology:") {
            catalog::templates().into_iter().find(|s| s.key == k)
        } else {
            None
        };
        if let Some(s) = starter {
            // A starter without targets starts with its own thresholds as the targets.
            let mut r = s.record();
            if r.targets.is_none() {
                r.targets = Some(super::state::starting_targets(&r));
            }
            nb.add(r);
        }
    };
    view! {
        <div class="field starter">
            <label for="starter-choice">"Start from"</label>
            <span class="field-input">
                <select id="starter-choice" on:change=move |ev| choice.set(event_target_value(&ev)) prop:value=move || choice.get()>
                    <optgroup label="Demo scenarios">
                        {catalog::demos().into_iter().map(|s| view! { <option value=format!("demo:{}", s.key)>{s.title}</option> }).collect_view()}
                    </optgroup>
                    <optgroup label="Empty circuit of a topology">
                        {catalog::templates().into_iter().map(|s| view! { <option value=format!("topology:{}", s.key)>{s.title}</option> }).collect_view()}
                    </optgroup>
                </select>
                <button id="add-starter" on:click=add>"Add"</button>
            </span>
        </div>
    }
}
