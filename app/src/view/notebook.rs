//! The notebook list: saved designs, search, new, duplicate, delete with undo; set-aside items
//! (damaged or from a newer version) with a download of each as stored; and a plain notice when
//! storage could not be read, so an empty list is never taken for the saved notebook.

use super::state::{blank_record, Notebook};
use crate::download::{file_stem, save_text};
use leptos::prelude::*;

/// One row of the list: id, name, topology, summary of the results, edit time (ms since the epoch).
type Row = (String, String, String, String, f64);

/// The list of saved designs.
#[component]
pub fn NotebookList() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    // One row per shown design: (id, name, topology, summary, edit time). While an edit waits to
    // be saved its snapshot is not computed yet: the row keeps the summary it showed.
    let shown = Memo::new(move |prev: Option<&Vec<Row>>| {
        let f = nb.filter.get().to_lowercase();
        nb.entries.with(|es| {
            es.iter()
                .filter(|e| f.is_empty() || e.record.name.to_lowercase().contains(&f))
                .map(|e| {
                    let summary = match &e.snapshot {
                        Some(s) => s.summary(),
                        None => prev
                            .filter(|_| nb.is_unsaved(&e.id))
                            .and_then(|p| p.iter().find(|r| r.0 == e.id))
                            .map(|r| r.3.clone())
                            .unwrap_or_else(|| "no result".into()),
                    };
                    (e.id.clone(), e.record.name.clone(), e.record.circuit.title().to_string(), summary, e.saved_at_ms)
                })
                .collect::<Vec<_>>()
        })
    });
    let ids = Memo::new(move |_| shown.with(|rows| rows.iter().map(|r| r.0.clone()).collect::<Vec<_>>()));
    view! {
        <nav class="notebook" aria-label="Notebook of saved designs">
            <div class="notebook-head">
                <h2>"Notebook"</h2>
                <button id="new-design" on:click=move |_| { nb.add(blank_record()); }>"New design"</button>
            </div>
            <div class="row no-print edit-steps" role="group" aria-label="Edits of the open design">
                <button id="undo-edit" class="quiet small" title="Undo the last edit (Ctrl+Z)" disabled=move || !nb.can_undo()
                    on:click=move |_| nb.undo()>"↶ Undo"</button>
                <button id="redo-edit" class="quiet small" title="Redo the edit undone last (Ctrl+Shift+Z or Ctrl+Y)" disabled=move || !nb.can_redo()
                    on:click=move |_| nb.redo()>"↷ Redo"</button>
            </div>
            <super::starters::StarterPicker />
            <div class="field">
                <label for="notebook-filter">"Find by name"</label>
                <input id="notebook-filter" type="search" prop:value=move || nb.filter.get()
                    on:input=move |ev| nb.filter.set(event_target_value(&ev)) />
            </div>
            {move || nb.deleted.get().map(|(e, _)| view! {
                <div class="undo-bar" role="status">
                    "Deleted “" {e.record.name.clone()} "”. "
                    <button id="undo-delete" class="quiet" on:click=move |_| nb.undo_delete()>"Undo"</button>
                </div>
            })}
            {move || (!nb.persistent.get()).then(|| view! {
                <p class="storage-unreadable" role="alert" id="storage-unreadable">
                    "This is not your saved notebook: the browser's storage could not be read, so designs saved earlier are not shown (they are left untouched). The list below holds only designs made in this tab, and nothing is saved."
                </p>
            })}
            <ul class="design-list" id="design-list">
                // Keyed by id alone: an edit updates the row's texts in place instead of making it again.
                <For each=move || ids.get() key=|id| id.clone() let:id>
                    {
                        let row = Memo::new({
                            let id = id.clone();
                            move |_| shown.with(|rows| rows.iter().find(|r| r.0 == id).cloned())
                        });
                        let part = move |f: fn(&Row) -> String| move || row.with(|r| r.as_ref().map(f).unwrap_or_default());
                        // The edit time to the second (the text shows seconds): formatted again only when
                        // that changes, not on every keystroke.
                        let second = Memo::new(move |_| row.with(|r| r.as_ref().map(|r| (r.4 / 1000.0).floor())).unwrap_or(0.0));
                        let when = move || {
                            let saved = second.get() * 1000.0;
                            String::from(js_sys::Date::new(&wasm_bindgen::JsValue::from_f64(saved)).to_locale_string("en-GB", &wasm_bindgen::JsValue::UNDEFINED))
                        };
                        let label = move || row.with(|r| r.as_ref().map(|r| r.1.clone()).unwrap_or_default());
                        let (id_open, id_dup, id_del, id_cls) = (id.clone(), id.clone(), id.clone(), id.clone());
                        view! {
                            <li class="design-item" class:open=move || nb.current.get().as_deref() == Some(id_cls.as_str()) data-id=id.clone()>
                                <button class="design-pick" on:click=move |_| nb.open(&id_open)>
                                    <span class="design-name">{part(|r| r.1.clone())}</span>
                                    <span class="design-meta">{part(|r| r.2.clone())} " · " {part(|r| r.3.clone())}</span>
                                    <span class="design-meta">"edited " {when}</span>
                                </button>
                                <span class="design-actions">
                                    <button class="quiet small dup" title="Duplicate" aria-label=move || format!("Duplicate {}", label())
                                        on:click=move |_| nb.duplicate(&id_dup)>"Copy"</button>
                                    <button class="quiet small del" title="Delete" aria-label=move || format!("Delete {}", label())
                                        on:click=move |_| nb.delete(&id_del)>"Delete"</button>
                                </span>
                            </li>
                        }
                    }
                </For>
            </ul>
            {move || {
                let aside = nb.set_aside.get();
                (!aside.is_empty()).then(|| view! {
                    <div class="set-aside" role="status" id="set-aside">
                        <h3>"Set aside (kept untouched in storage)"</h3>
                        <ul>{aside.into_iter().map(|a| {
                            let file = format!("{}.json", file_stem(&a.key));
                            let (raw, key) = (a.raw.clone(), a.key.clone());
                            view! {
                                <li>
                                    <code>{a.key}</code>": "{a.message}" "
                                    <button class="quiet small set-aside-download" aria-label=format!("Download {key} as it is stored")
                                        on:click=move |_| {
                                            if let Err(e) = save_text(&file, "application/json", &raw) {
                                                nb.banner.set(Some(format!("could not download the item: {e}")));
                                            }
                                        }>"Download"</button>
                                </li>
                            }
                        }).collect_view()}</ul>
                    </div>
                })
            }}
        </nav>
    }
}
