//! Parts: exact values from the targets, then the best standard-value combinations, each one
//! pickable. All arithmetic is `core`'s (synthesis, search, apply); this section only asks and shows.

use super::state::Notebook;
use crate::fields::QuantityField;
use hysteron_core::eseries::ESeries;
use hysteron_core::overview::{synthesis, Synthesis};
use hysteron_core::notation::{format_with_unit, Unit};
use hysteron_core::search::SearchSettings;
use hysteron_core::topology::{Circuit, ParameterKind};
use leptos::prelude::*;

const SERIES: [ESeries; 7] = [ESeries::E3, ESeries::E6, ESeries::E12, ESeries::E24, ESeries::E48, ESeries::E96, ESeries::E192];

fn ohms(v: f64) -> String {
    format_with_unit(v, 4, Unit::Ohm)
}

/// The parts section: synthesise, search standard values, pick an alternative.
#[component]
pub fn PartsSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let settings = Memo::new(move |_| nb.with_current(|r| r.search.clone().unwrap_or_default()).unwrap_or_default());
    let exact = RwSignal::new(None::<Result<Synthesis, String>>);
    let search = super::search::SearchState::new();
    // New targets make the exact answer stale; another design stops a running search. A search
    // result is kept with its design and marked out of date when the targets change (never cleared).
    // Only a change of the targets themselves (a memo compares them), not any edit of the record
    // (keeping the search result with the design is one).
    let targets = Memo::new(move |_| nb.with_current(|r| r.targets).flatten());
    Effect::new(move |_| {
        nb.current.track();
        targets.track();
        exact.set(None);
    });
    Effect::new(move |_| {
        nb.current.track();
        search.reset();
    });
    let run = move |_| {
        let Some(record) = nb.with_current_untracked(|r| r.clone()) else { return };
        let Some(targets) = record.targets else {
            exact.set(Some(Err("enter the thresholds wanted (Purpose and targets) first".into())));
            return;
        };
        let syn = synthesis(&record, &targets);
        search.start(&record, &targets, syn.as_ref().ok());
        exact.set(Some(syn.map_err(|e| e.to_string())));
    };
    let use_exact = move |_| {
        if let Some(Ok(s)) = exact.get_untracked() {
            let c = s.circuit;
            nb.edit(move |r| r.circuit = c);
        }
    };
    let set_series = move |ev| {
        let v = event_target_value(&ev);
        if let Ok(s) = v.parse::<ESeries>() {
            nb.edit(move |r| {
                let mut st = r.search.clone().unwrap_or_default();
                st.series = s;
                r.search = Some(st);
                r.parts.series = s;
                r.parts.tolerance_pct = s.usual_tolerance_pct();
            });
        }
    };
    let range_field = move |id: &'static str, label: &'static str, get: fn(&SearchSettings) -> f64, put: fn(&mut SearchSettings, f64)| {
        let value = Signal::derive(move || get(&settings.get()));
        let on_value = Callback::new(move |v: f64| {
            nb.edit_keyed(id, move |r| {
                let mut st = r.search.clone().unwrap_or_default();
                put(&mut st, v);
                r.search = Some(st);
            })
        });
        // The smallest resistor must stay below the largest: refused at the field otherwise.
        let check = Callback::new(move |v: f64| -> Option<String> {
            let mut st = settings.get_untracked();
            put(&mut st, v);
            (st.r_min_ohm >= st.r_max_ohm).then(|| {
                if id == "search-r-min" {
                    format!("must be below the largest resistor ({})", ohms(st.r_max_ohm))
                } else {
                    format!("must be above the smallest resistor ({})", ohms(st.r_min_ohm))
                }
            })
        });
        view! { <QuantityField id=id.to_string() label=label.to_string() unit="Ω" value on_value check /> }
    };
    view! {
        <section class="card" aria-labelledby="parts-heading" id="parts">
            <h2 id="parts-heading">"Parts from the targets"</h2>
            <div class="row">
                <div class="field">
                    <label for="search-series">"Standard values"</label>
                    <select id="search-series" prop:value=move || settings.get().series.to_string() on:change=set_series>
                        {SERIES.iter().map(|s| view! { <option value=s.to_string()>{format!("{s} ({} %)", s.usual_tolerance_pct())}</option> }).collect_view()}
                    </select>
                </div>
                {range_field("search-r-min", "Smallest resistor", |s| s.r_min_ohm, |s, v| s.r_min_ohm = v)}
                {range_field("search-r-max", "Largest resistor", |s| s.r_max_ohm, |s, v| s.r_max_ohm = v)}
                <button id="find-parts" on:click=run>"Find parts"</button>
            </div>
            {move || exact.get().map(|res| match res {
                Err(e) => view! { <p class="error" id="synthesis-error" role="alert">{e}</p> }.into_any(),
                Ok(s) => {
                    let parts = s.circuit.parameters().into_iter().filter(|p| p.kind == ParameterKind::Resistor)
                        .map(|p| format!("{} {}", p.designator.unwrap_or_default(), ohms(p.value))).collect::<Vec<_>>().join(", ");
                    view! {
                        <div class="exact" id="synthesis-result">
                            <p>"Exact values: " <span id="exact-parts">{parts}</span> " → VT+ "
                                <output id="exact-vt-upper" data-value=s.analysis.vt_upper_v.to_string()>{format!("{:.4} V", s.analysis.vt_upper_v)}</output>
                                ", VT− " <output id="exact-vt-lower" data-value=s.analysis.vt_lower_v.to_string()>{format!("{:.4} V", s.analysis.vt_lower_v)}</output></p>
                            <button class="quiet" id="use-exact" on:click=use_exact>"Use exact values"</button>
                        </div>
                    }.into_any()
                }
            })}
            <super::search::SearchResults state=search />
        </section>
    }
}
