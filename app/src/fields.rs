//! Number fields that accept engineering notation and the RKM code, and show what is wrong at the
//! field itself.

use leptos::prelude::*;

/// Parses a field's text into a value in base units (ohms, volts, amperes...).
/// The parsing rules live in `core` (IEC 60062 RKM code and SI prefixes); this is the page's one door to them.
pub fn parse_value(text: &str) -> Result<f64, String> {
    hysteron_core::notation::parse_value(text).map_err(|e| e.to_string())
}

/// Parses a field's text and checks the value against the physical range of the quantity its unit
/// names (`core::limits`), so a supply of 1e300 V or a negative resistor is refused at the field.
pub fn parse_in_range(text: &str, unit: &str) -> Result<f64, String> {
    let v = parse_value(text)?;
    match hysteron_core::limits::for_unit_symbol(unit).and_then(|q| hysteron_core::limits::refusal(q, v)) {
        None => Ok(v),
        Some(reason) => Err(reason),
    }
}

/// Formats a value for a field, in engineering notation (4 significant digits, no unit: the unit
/// stands beside the field).
pub fn format_value(value: f64, _unit: &str) -> String {
    hysteron_core::notation::format_engineering(value, 4)
}

/// A labelled text field for one numeric quantity. It keeps its own text while the user types; a valid
/// value is passed to `on_value`; an invalid one shows the parser's message under the field.
#[component]
pub fn QuantityField(
    /// Element id of the input (stable, used by tests and labels).
    id: String,
    /// Visible label.
    label: String,
    /// Unit shown after the field and used when formatting.
    unit: &'static str,
    /// Current value from the design (formatted into the field when it changes from elsewhere).
    #[prop(into)]
    value: Signal<f64>,
    /// Called with each valid value the user enters.
    on_value: Callback<f64>,
) -> impl IntoView {
    let text = RwSignal::new(format_value(value.get_untracked(), unit));
    let error = RwSignal::new(None::<String>);
    // When the design changes from elsewhere (undo, synthesis, a loaded design), show the new value,
    // unless the field already holds text that parses to it.
    Effect::new(move |_| {
        let v = value.get();
        let current = text.get_untracked();
        let same = parse_value(&current).map(|x| (x - v).abs() <= 1e-12 * v.abs().max(1e-30)).unwrap_or(false);
        if !same {
            text.set(format_value(v, unit));
            error.set(None);
        }
    });
    let err_id = format!("{id}-error");
    let err_id2 = err_id.clone();
    view! {
        <div class="field" class:invalid=move || error.with(|e| e.is_some())>
            <label for=id.clone()>{label}</label>
            <span class="field-input">
                <input
                    id=id
                    type="text"
                    inputmode="decimal"
                    autocomplete="off"
                    spellcheck="false"
                    aria-describedby=err_id.clone()
                    aria-invalid=move || if error.with(|e| e.is_some()) { "true" } else { "false" }
                    prop:value=move || text.get()
                    on:input=move |ev| {
                        let t = event_target_value(&ev);
                        text.set(t.clone());
                        match parse_in_range(&t, unit) {
                            Ok(v) => {
                                error.set(None);
                                on_value.run(v);
                            }
                            Err(e) => error.set(Some(e)),
                        }
                    }
                />
                <span class="unit">{unit}</span>
            </span>
            <span class="field-error" id=err_id2 role="status">{move || error.get().unwrap_or_default()}</span>
        </div>
    }
}

/// A field for a quantity that may be left empty (meaning "not given").
#[component]
pub fn OptionalQuantityField(
    /// Element id of the input.
    id: String,
    /// Visible label.
    label: String,
    /// Unit shown after the field.
    unit: &'static str,
    /// Current value, `None` when not given.
    #[prop(into)]
    value: Signal<Option<f64>>,
    /// Called with each valid entry (`None` when the field is emptied).
    on_value: Callback<Option<f64>>,
) -> impl IntoView {
    let show = move |v: Option<f64>| v.map(|v| format_value(v, unit)).unwrap_or_default();
    let text = RwSignal::new(show(value.get_untracked()));
    let error = RwSignal::new(None::<String>);
    Effect::new(move |_| {
        let v = value.get();
        let current = text.get_untracked();
        let same = match (current.trim().is_empty(), v) {
            (true, None) => true,
            (false, Some(v)) => parse_value(&current).map(|x| (x - v).abs() <= 1e-12 * v.abs().max(1e-30)).unwrap_or(false),
            _ => false,
        };
        if !same {
            text.set(show(v));
            error.set(None);
        }
    });
    let err_id = format!("{id}-error");
    view! {
        <div class="field" class:invalid=move || error.with(|e| e.is_some())>
            <label for=id.clone()>{label}</label>
            <span class="field-input">
                <input id=id type="text" inputmode="decimal" autocomplete="off" spellcheck="false"
                    placeholder="not given"
                    aria-describedby=err_id.clone()
                    aria-invalid=move || if error.with(|e| e.is_some()) { "true" } else { "false" }
                    prop:value=move || text.get()
                    on:input=move |ev| {
                        let t = event_target_value(&ev);
                        text.set(t.clone());
                        if t.trim().is_empty() {
                            error.set(None);
                            on_value.run(None);
                        } else {
                            match parse_in_range(&t, unit) {
                                Ok(v) => { error.set(None); on_value.run(Some(v)); }
                                Err(e) => error.set(Some(e)),
                            }
                        }
                    } />
                <span class="unit">{unit}</span>
            </span>
            <span class="field-error" id=err_id role="status">{move || error.get().unwrap_or_default()}</span>
        </div>
    }
}
