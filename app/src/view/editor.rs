//! The design editor: name, and every numeric quantity of the circuit as a field.

use super::state::Notebook;
use crate::fields::QuantityField;
use hysteron_core::topology::{Circuit, ParameterKind};
use leptos::prelude::*;

fn unit_of(kind: ParameterKind) -> &'static str {
    match kind {
        ParameterKind::Resistor => "Ω",
        ParameterKind::BiasCurrent => "A",
        ParameterKind::Device => "",
        _ => "V",
    }
}

/// Edits the open design's parts and device values.
#[component]
pub fn DesignEditor() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    // The list of fields changes only when the topology's parameter set changes.
    let fields = Memo::new(move |_| {
        nb.with_current(|r| {
            r.circuit.parameters().into_iter().map(|p| (p.id, p.designator, p.label, p.kind)).collect::<Vec<_>>()
        })
        .unwrap_or_default()
    });
    let name = Signal::derive(move || nb.with_current(|r| r.name.clone()).unwrap_or_default());
    view! {
        <section class="card" aria-labelledby="parts-heading">
            <h2 id="parts-heading">"Circuit"</h2>
            <div class="field">
                <label for="design-name">"Name"</label>
                <input id="design-name" type="text" prop:value=name
                    on:change=move |ev| { let v = event_target_value(&ev); nb.edit_keyed("name", |r| r.name = v); } />
            </div>
            <div class="field-grid">
                {move || fields.get().into_iter().enumerate().map(|(i, (id, designator, label, kind))| {
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
                    let shown = match designator { Some(d) => format!("{d} — {label}"), None => label };
                    view! { <QuantityField id=format!("field-{id}") label=shown unit=unit_of(kind) value on_value /> }
                }).collect_view()}
            </div>
        </section>
    }
}
