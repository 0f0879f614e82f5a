//! The circuit section: topology choice with a note on when to use it, every numeric quantity of
//! the circuit as a field, and the whole circuit as JSON for structural options.

use super::share::{schematic_url, StyleChoice};
use super::state::Notebook;
use crate::fields::QuantityField;
use hysteron_core::catalog;
use hysteron_core::schematic::SymbolStyle;
use hysteron_core::topology::reference::REFERENCE_KINDS;
use hysteron_core::topology::{Circuit, Topology};
use leptos::prelude::*;

/// Edits the open design's topology, parts and device values.
#[component]
pub fn CircuitSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    // The list of fields changes only when the topology's parameter set changes.
    let fields = Memo::new(move |_| {
        nb.with_current(|r| {
            r.circuit.parameters().into_iter().map(|p| (p.id, p.designator, p.label, p.unit.symbol())).collect::<Vec<_>>()
        })
        .unwrap_or_default()
    });
    let topology = Memo::new(move |_| nb.with_current(|r| r.circuit.name().to_string()).unwrap_or_default());
    let choose = move |name: String| {
        if let Some(t) = catalog::templates().into_iter().find(|s| s.record().circuit.name() == name) {
            let circuit = t.record().circuit;
            nb.edit(move |r| r.circuit = circuit);
        }
    };
    // The reference kind (divider, zener, adjustable shunt reference…) of a topology that has one,
    // and the reference's datasheet values that are not parameters; core converts and checks.
    let ref_kind = Memo::new(move |_| nb.with_current(|r| r.circuit.reference_kind()).flatten());
    let ref_fields = Memo::new(move |_| {
        nb.with_current(|r| r.circuit.reference().map(|(x, _)| x.fields()).unwrap_or_default()).unwrap_or_default()
    });
    let json_text = RwSignal::new(String::new());
    let json_error = RwSignal::new(None::<String>);
    let json_open = RwSignal::new(false);
    let load_json = move || {
        json_text.set(nb.with_current_untracked(|r| serde_json::to_string_pretty(&r.circuit).unwrap_or_default()).unwrap_or_default());
        json_error.set(None);
    };
    let apply_json = move |_| {
        let text = json_text.get_untracked();
        match serde_json::from_str::<Topology>(&text) {
            Err(e) => json_error.set(Some(format!("not a circuit: {e}"))),
            Ok(c) => match c.validate() {
                Err(e) => json_error.set(Some(e.to_string())),
                Ok(()) => {
                    json_error.set(None);
                    nb.edit(move |r| r.circuit = c);
                }
            },
        }
    };
    view! {
        <section class="card" aria-labelledby="circuit-heading" id="circuit">
            <h2 id="circuit-heading">"Circuit"</h2>
            <div class="field">
                <label for="topology-choice">"Topology"</label>
                <select id="topology-choice" prop:value=move || topology.get() on:change=move |ev| choose(event_target_value(&ev))>
                    {catalog::templates().into_iter().map(|s| {
                        let name = s.record().circuit.name().to_string();
                        view! { <option value=name>{s.title}</option> }
                    }).collect_view()}
                </select>
                <p class="note" id="topology-note">{move || catalog::topology_note(&topology.get())}</p>
            </div>
            {move || ref_kind.get().map(|kind| view! {
                <div class="field">
                    <label for="reference-kind">"Reference"</label>
                    <select id="reference-kind" prop:value=kind on:change=move |ev| {
                        let k = event_target_value(&ev);
                        nb.edit(move |r| if let Some(c) = r.circuit.with_reference_kind(&k) { r.circuit = c; });
                    }>
                        {REFERENCE_KINDS.iter().map(|(tag, label)| view! { <option value=*tag>{*label}</option> }).collect_view()}
                    </select>
                </div>
            })}
            <div class="field-grid" id="reference-fields">
                {move || ref_fields.get().into_iter().map(|f| {
                    let id = f.id;
                    let value = Signal::derive(move || {
                        nb.with_current(|r| r.circuit.reference().and_then(|(x, _)| x.fields().into_iter().find(|g| g.id == id).map(|g| g.value)))
                            .flatten()
                            .unwrap_or(f64::NAN)
                    });
                    let key = format!("reference-{id}");
                    let on_value = Callback::new(move |v: f64| {
                        nb.edit_keyed(&key, |r| {
                            if let Ok(c) = r.circuit.with_reference_field(id, v) {
                                r.circuit = c;
                            }
                        })
                    });
                    let check = Callback::new(move |v: f64| -> Option<String> {
                        nb.with_current_untracked(|r| r.circuit.with_reference_field(id, v).err().map(|e| e.to_string())).flatten()
                    });
                    view! { <QuantityField id=format!("field-reference-{id}") label=f.label.to_string() unit=f.unit value on_value quantity=f.quantity check /> }
                }).collect_view()}
            </div>
            <div class="field-grid">
                {move || fields.get().into_iter().enumerate().map(|(i, (id, designator, label, unit))| {
                    let value = Signal::derive(move || {
                        nb.with_current(|r| r.circuit.parameters().get(i).map(|p| p.value).unwrap_or(f64::NAN)).unwrap_or(f64::NAN)
                    });
                    let key = format!("param-{i}");
                    let on_value = Callback::new(move |v: f64| {
                        nb.edit_keyed(&key, |r| {
                            let mut values: Vec<f64> = r.circuit.parameters().iter().map(|p| p.value).collect();
                            if i < values.len() {
                                values[i] = v;
                                if let Ok(c) = r.circuit.with_parameters(&values) {
                                    r.circuit = c;
                                }
                            }
                        })
                    });
                    // A value that leaves the circuit invalid (a 0 V supply below the negative rail…) is
                    // refused at its field, with the reason in the words on screen.
                    let check = Callback::new(move |v: f64| -> Option<String> {
                        nb.with_current_untracked(|r| {
                            let mut values: Vec<f64> = r.circuit.parameters().iter().map(|p| p.value).collect();
                            *values.get_mut(i)? = v;
                            let err = r.circuit.with_parameters(&values).and_then(|c| c.validate().map(|_| ())).err()?;
                            // A design that is already invalid for the same reason stays editable.
                            if r.circuit.validate().err().as_ref() == Some(&err) {
                                return None;
                            }
                            let own = r.circuit.parameters().get(i).map(|p| p.designator.clone().unwrap_or_else(|| p.label.clone()));
                            let err = hysteron_core::topology::named_on_screen(err, &r.circuit.parameters());
                            Some(match (&err, own) {
                                (hysteron_core::error::DesignError::InvalidValue { field, reason }, Some(o)) if *field == o => reason.clone(),
                                _ => err.to_string(),
                            })
                        })
                        .flatten()
                    });
                    let shown = match designator { Some(d) => format!("{d} — {label}"), None => label };
                    view! { <QuantityField id=format!("field-{id}") label=shown unit=unit value on_value check /> }
                }).collect_view()}
            </div>
            <details class="json-edit" on:toggle=move |_| { let o = !json_open.get_untracked(); json_open.set(o); if o { load_json(); } }>
                <summary>"Structure and options as JSON (rails, optional resistors, output type, model…)"</summary>
                <textarea id="circuit-json" rows="14" spellcheck="false" prop:value=move || json_text.get()
                    on:input=move |ev| json_text.set(event_target_value(&ev))></textarea>
                <div class="row">
                    <button id="circuit-json-apply" on:click=apply_json>"Apply"</button>
                    <button class="quiet" on:click=move |_| load_json()>"Reload from the design"</button>
                </div>
                {move || json_error.get().map(|e| view! { <p class="error" id="circuit-json-error" role="alert">{e}</p> })}
            </details>
        </section>
    }
}

/// The schematic of the open design with its part values, in the chosen symbol style; it stands
/// with the results, in view beside (or above) the inputs.
#[component]
pub fn SchematicView() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let style = expect_context::<StyleChoice>().0;
    let image = Memo::new(move |_| {
        let s = style.get();
        nb.with_settled(|r| schematic_url(r, s)).unwrap_or_default()
    });
    view! {
        <section class="card schematic-card" aria-labelledby="schematic-heading" id="schematic-view">
            <div class="card-head">
                <h2 id="schematic-heading">"Schematic"</h2>
                <div class="inline-field no-print">
                    <label for="symbol-style">"Symbols"</label>
                    <select id="symbol-style"
                        prop:value=move || if style.get() == SymbolStyle::Ieee315 { "ieee315" } else { "iec60617" }
                        on:change=move |ev| style.set(if event_target_value(&ev) == "ieee315" { SymbolStyle::Ieee315 } else { SymbolStyle::Iec60617 })>
                        <option value="iec60617">"IEC 60617"</option>
                        <option value="ieee315">"IEEE 315"</option>
                    </select>
                </div>
            </div>
            <img id="schematic" class="schematic" src=move || image.get() alt="Schematic of the circuit with part designators and values" />
        </section>
    }
}
