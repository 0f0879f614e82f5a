//! Number fields that accept engineering notation and the RKM code, and show what is wrong at the
//! field itself.
//!
//! How a field behaves (the rules every numeric field of the page keeps):
//! - **What is typed stays as typed.** While the field has focus its text is never rewritten: each
//!   keystroke that forms a valid value hands the value on, one that does not shows why beside the
//!   field, and the design keeps its last valid value.
//! - **Normalised on commit.** When the field loses focus or Enter is pressed, a valid entry is
//!   shown again in engineering notation ("100u" becomes "100 µ"); an invalid one stays as typed,
//!   with its message, so it can be corrected.
//! - **Only sensible values are stored.** Every value is finite (the number reader refuses NaN and
//!   infinities) and inside the physical range `core::limits` gives its unit; a field may add a
//!   check in context (the design must stay valid with the new value), whose message is also shown
//!   beside the field and which also keeps the value out of the design.
//! - **Changes from elsewhere** (undo, synthesis, another design opened) are shown at once, unless
//!   they are the field's own value coming back while it is being edited.

use hysteron_core::error::DesignError;
use hysteron_core::limits::{for_unit_symbol, refusal, Quantity};
use leptos::prelude::*;

/// Parses a field's text into a value in base units (ohms, volts, amperes...).
/// The parsing rules live in `core` (IEC 60062 RKM code and SI prefixes); this is the page's one door to them.
/// The value is always finite: `core` refuses NaN and infinities.
pub fn parse_value(text: &str) -> Result<f64, String> {
    hysteron_core::notation::parse_value(text).map_err(|e| e.to_string())
}

/// Parses a field's text and checks the value against the physical range of the quantity its unit
/// names (`core::limits`), so a supply of 1e300 V or a negative resistor is refused at the field.
pub fn parse_in_range(text: &str, unit: &str) -> Result<f64, String> {
    let v = parse_value(text)?;
    match for_unit_symbol(unit).and_then(|q| refusal(q, v)) {
        None => Ok(v),
        Some(reason) => Err(reason),
    }
}

/// Parses a field's text as a value of `quantity` and checks its range (for fields whose unit symbol
/// names no quantity of its own, or a narrower one than the symbol would: a trial count, a seed).
pub fn parse_quantity(text: &str, quantity: Quantity) -> Result<f64, String> {
    let v = parse_value(text)?;
    match refusal(quantity, v) {
        None => Ok(v),
        Some(reason) => Err(reason),
    }
}

/// Formats a value for a field, in engineering notation (4 significant digits, no unit: the unit
/// stands beside the field). A value that is not a number shows as an empty field, never as "NaN".
pub fn format_value(value: f64, _unit: &str) -> String {
    if value.is_finite() {
        hysteron_core::notation::format_engineering(value, 4)
    } else {
        String::new()
    }
}

/// The message to show beside the field `key` for an error `core` gave about a value it holds:
/// just the reason when the error is about that field (the label already stands beside it),
/// otherwise the whole message.
pub fn message_for(error: &DesignError, key: &str) -> String {
    match error {
        DesignError::InvalidValue { field, reason } if field == key || field.ends_with(&format!(".{key}")) => reason.clone(),
        other => other.to_string(),
    }
}

/// A check of whole numbers (trial counts, seeds): `None` when `v` is a whole number from `min` to
/// `max`, otherwise the message for the field.
pub fn whole_number(v: f64, min: f64, max: f64) -> Option<String> {
    if v.fract() != 0.0 {
        Some(format!("must be a whole number (got {v})"))
    } else if v < min || v > max {
        Some(format!("must be from {} to {}", fmt_plain(min), fmt_plain(max)))
    } else {
        None
    }
}

fn fmt_plain(v: f64) -> String {
    hysteron_core::notation::format_engineering(v, 4).replace(' ', "")
}

fn same_value(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * a.abs().max(b.abs()).max(1e-30)
}

/// What a field knows about the value it edits: shown text, its own message, and what it last sent.
#[derive(Clone, Copy)]
struct FieldState {
    text: RwSignal<String>,
    error: RwSignal<Option<String>>,
    /// The field has focus: its text belongs to the user.
    editing: RwSignal<bool>,
    /// The last value this field handed on (`Some(None)` = emptied), to tell its own value coming
    /// back from a change made elsewhere.
    sent: StoredValue<Option<Option<f64>>>,
}

/// The shared body of [`QuantityField`] and [`OptionalQuantityField`]: `value` is `None` when the
/// design holds no value (or a non-finite one), `optional` says whether an empty field is allowed.
#[allow(clippy::too_many_arguments)] // one field's whole description
fn number_field(
    id: String,
    label: String,
    unit: &'static str,
    value: Signal<Option<f64>>,
    on_value: Callback<Option<f64>>,
    optional: bool,
    quantity: Option<Quantity>,
    check: Option<Callback<f64, Option<String>>>,
) -> impl IntoView {
    let show = move |v: Option<f64>| v.map(|v| format_value(v, unit)).unwrap_or_default();
    let st = FieldState {
        text: RwSignal::new(show(value.get_untracked())),
        error: RwSignal::new(None),
        editing: RwSignal::new(false),
        sent: StoredValue::new(None),
    };
    // A change from elsewhere: show it, unless it is this field's own value coming back while the
    // user is typing (the text is theirs until they commit), or the text already reads as it.
    Effect::new(move |_| {
        let v = value.get().filter(|v| v.is_finite());
        let own = st.sent.get_value().is_some_and(|s| match (s, v) {
            (Some(a), Some(b)) => same_value(a, b),
            (None, None) => true,
            _ => false,
        });
        if st.editing.get_untracked() && own {
            return;
        }
        let current = st.text.get_untracked();
        let same = match (current.trim().is_empty(), v) {
            (true, None) => true,
            (false, Some(v)) => parse_value(&current).is_ok_and(|x| same_value(x, v)),
            _ => false,
        };
        if !same {
            st.text.set(show(v));
            st.error.set(None);
        }
    });
    let accept = move |t: &str| -> Result<Option<f64>, String> {
        if t.trim().is_empty() {
            return if optional { Ok(None) } else { Err("enter a value".into()) };
        }
        let v = match quantity {
            Some(q) => parse_quantity(t, q)?,
            None => parse_in_range(t, unit)?,
        };
        if let Some(msg) = check.and_then(|c| c.run(v)) {
            return Err(msg);
        }
        Ok(Some(v))
    };
    // Takes the text the input holds (from an input event, or read back at change and blur: a
    // WebDriver clear, autofill or paste may change it without an input event).
    let take = move |t: String| {
        st.text.set(t.clone());
        match accept(&t) {
            Ok(v) => {
                st.error.set(None);
                st.sent.set_value(Some(v));
                on_value.run(v);
            }
            Err(e) => st.error.set(Some(e)),
        }
    };
    let on_input = move |ev: leptos::ev::Event| {
        st.editing.set(true);
        take(event_target_value(&ev));
    };
    // Commit: a valid entry is shown as the design now holds it, in the page's notation. An empty
    // field stays empty (WebDriver's clear, and a person selecting all and deleting, blur it).
    let commit = move |t: String| {
        if t != st.text.get_untracked() {
            take(t.clone());
        }
        if !t.trim().is_empty() && accept(&t).is_ok() {
            let shown = show(value.get_untracked().filter(|v| v.is_finite()));
            if shown != t {
                st.text.set(shown);
            }
            st.error.set(None);
        }
    };
    let err_id = format!("{id}-error");
    let placeholder = if optional { "not given" } else { "" };
    view! {
        <div class="field" class:invalid=move || st.error.with(|e| e.is_some())>
            <label for=id.clone()>{label}</label>
            <span class="field-input">
                <input
                    id=id
                    type="text"
                    inputmode="decimal"
                    autocomplete="off"
                    spellcheck="false"
                    placeholder=placeholder
                    aria-describedby=err_id.clone()
                    aria-invalid=move || if st.error.with(|e| e.is_some()) { "true" } else { "false" }
                    prop:value=move || st.text.get()
                    on:focus=move |_| st.editing.set(true)
                    on:blur=move |ev| {
                        st.editing.set(false);
                        commit(event_target_value(&ev));
                    }
                    on:change=move |ev| {
                        let t = event_target_value(&ev);
                        if t != st.text.get_untracked() {
                            take(t);
                        }
                    }
                    on:keydown=move |ev: leptos::ev::KeyboardEvent| {
                        if ev.key() == "Enter" {
                            commit(event_target_value(&ev));
                        }
                    }
                    on:input=on_input
                />
                <span class="unit">{unit}</span>
            </span>
            <span class="field-error" id=err_id role="status">{move || st.error.get().unwrap_or_default()}</span>
        </div>
    }
}

/// A labelled text field for one numeric quantity. It keeps its own text while the user types; a valid
/// value is passed to `on_value`; an invalid one shows its message beside the field and is not passed on.
#[component]
pub fn QuantityField(
    /// Element id of the input (stable, used by tests and labels).
    id: String,
    /// Visible label.
    label: String,
    /// Unit shown after the field; its symbol also chooses the value's range (`core::limits`).
    unit: &'static str,
    /// Current value from the design (shown when it changes from elsewhere; NaN shows as empty).
    #[prop(into)]
    value: Signal<f64>,
    /// Called with each valid value the user enters.
    on_value: Callback<f64>,
    /// The range to check instead of the one the unit symbol names.
    #[prop(optional)]
    quantity: Option<Quantity>,
    /// A check in context (is the design still valid with this value?): `Some(message)` refuses the
    /// value and shows the message beside the field.
    #[prop(optional)]
    check: Option<Callback<f64, Option<String>>>,
) -> impl IntoView {
    let value = Signal::derive(move || Some(value.get()).filter(|v| v.is_finite()));
    let on_value = Callback::new(move |v: Option<f64>| {
        if let Some(v) = v {
            on_value.run(v);
        }
    });
    number_field(id, label, unit, value, on_value, false, quantity, check)
}

/// A field for a quantity that may be left empty (meaning "not given").
#[component]
pub fn OptionalQuantityField(
    /// Element id of the input.
    id: String,
    /// Visible label.
    label: String,
    /// Unit shown after the field; its symbol also chooses the value's range (`core::limits`).
    unit: &'static str,
    /// Current value, `None` when not given.
    #[prop(into)]
    value: Signal<Option<f64>>,
    /// Called with each valid entry (`None` when the field is emptied).
    on_value: Callback<Option<f64>>,
    /// The range to check instead of the one the unit symbol names.
    #[prop(optional)]
    quantity: Option<Quantity>,
    /// A check in context: `Some(message)` refuses the value and shows the message beside the field.
    #[prop(optional)]
    check: Option<Callback<f64, Option<String>>>,
) -> impl IntoView {
    number_field(id, label, unit, value, on_value, true, quantity, check)
}
