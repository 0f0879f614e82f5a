//! Purpose and targets: what the circuit is for, the thresholds wanted, the operating range.

use super::state::Notebook;
use crate::fields::{OptionalQuantityField, QuantityField};
use hysteron_core::analysis::{CheckSettings, ImpedanceChoice, Targets, Thresholds};
use hysteron_core::notation::{format_with_unit, Unit};
use hysteron_core::safety::cautions;
use leptos::prelude::*;

fn default_targets() -> Targets {
    Targets { vt_upper_v: 3.0, vt_lower_v: 2.0, impedance: ImpedanceChoice::AnchorOhm(100e3) }
}

fn volts(v: f64) -> String {
    format_with_unit(v, 4, Unit::Volt)
}

/// What is wrong with targets after the field `id` was changed, in the words on screen.
fn targets_problem(id: &str, t: &Targets) -> Option<String> {
    let (up, lo) = (t.vt_upper_v, t.vt_lower_v);
    if up > lo {
        return None;
    }
    Some(match id {
        "target-vt-upper" => format!("must be above VT− wanted ({})", volts(lo)),
        "target-vt-lower" => format!("must be below VT+ wanted ({})", volts(up)),
        "target-width" => "must be above zero".to_string(),
        _ => format!("gives VT+ {} at or below VT− {}", volts(up), volts(lo)),
    })
}

/// What is wrong with the operating range after the field `id` was changed, in the words on screen.
fn range_problem(id: &str, c: &CheckSettings) -> Option<String> {
    let order = |lo: Option<f64>, hi: Option<f64>| matches!((lo, hi), (Some(a), Some(b)) if a > b);
    match id {
        "check-supply-min" if order(c.supply_min_v, c.supply_max_v) => Some(format!("must not be above the supply maximum ({})", volts(c.supply_max_v?))),
        "check-supply-max" if order(c.supply_min_v, c.supply_max_v) => Some(format!("must not be below the supply minimum ({})", volts(c.supply_min_v?))),
        "check-input-min" if order(c.input_min_v, c.input_max_v) => Some(format!("must not be above the highest input ({})", volts(c.input_max_v?))),
        "check-input-max" if order(c.input_min_v, c.input_max_v) => Some(format!("must not be below the lowest input ({})", volts(c.input_min_v?))),
        "check-recovery" if c.expected_recovery_v < 0.0 => Some("must not be negative".to_string()),
        _ => None,
    }
}

/// The first section of a design: name, purpose, targets and operating range, and cautions.
#[component]
pub fn PurposeSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    // Memos: an edit of another part of the design leaves these fields alone.
    let name = Memo::new(move |_| nb.with_current(|r| r.name.clone()).unwrap_or_default());
    let purpose = Memo::new(move |_| nb.with_current(|r| r.purpose.clone()).unwrap_or_default());
    let targets = Memo::new(move |_| nb.with_current(|r| r.targets).flatten());
    let by_centre = RwSignal::new(false);
    let shown_targets = Memo::new(move |_| targets.get().or_else(|| nb.with_current(super::state::starting_targets)).unwrap_or_else(default_targets));
    let t = move || shown_targets.get();
    let set_t = move |key: &'static str, f: Box<dyn Fn(&mut Targets)>| {
        nb.edit_keyed(key, move |r| {
            let mut t = r.targets.unwrap_or_else(|| super::state::starting_targets(r));
            f(&mut t);
            r.targets = Some(t);
        })
    };
    // Each threshold field refuses a value that would put VT+ at or below VT− (or a width of zero
    // or less), and says so beside itself in the words on screen.
    let thresholds_field = move |id: &'static str, label: &'static str, get: fn(&Targets) -> f64, put: fn(&mut Targets, f64)| {
        let value = Signal::derive(move || get(&t()));
        let on_value = Callback::new(move |v: f64| set_t(id, Box::new(move |t| put(t, v))));
        let check = Callback::new(move |v: f64| {
            let mut candidate = targets.get_untracked().unwrap_or_else(default_targets);
            put(&mut candidate, v);
            targets_problem(id, &candidate)
        });
        view! { <QuantityField id=id.to_string() label=label.to_string() unit="V" value on_value check /> }
    };
    let check = move |id: &'static str, label: &'static str, get: fn(&hysteron_core::analysis::CheckSettings) -> Option<f64>,
                      put: fn(&mut hysteron_core::analysis::CheckSettings, Option<f64>)| {
        let value = Memo::new(move |_| nb.with_current(|r| get(&r.checks)).flatten());
        let on_value = Callback::new(move |v: Option<f64>| nb.edit_keyed(id, move |r| put(&mut r.checks, v)));
        let check = Callback::new(move |v: f64| {
            let mut candidate = nb.with_current_untracked(|r| r.checks)?;
            put(&mut candidate, Some(v));
            range_problem(id, &candidate)
        });
        view! { <OptionalQuantityField id=id.to_string() label=label.to_string() unit="V" value=Signal::derive(move || value.get()) on_value check /> }
    };
    // With a current budget chosen there is no anchor value: the anchor field is empty (never "NaN").
    let anchor = Signal::derive(move || match t().impedance {
        ImpedanceChoice::AnchorOhm(r) => Some(r),
        ImpedanceChoice::CurrentBudgetA(_) => None,
    });
    let budget = Signal::derive(move || match t().impedance {
        ImpedanceChoice::CurrentBudgetA(a) => Some(a),
        ImpedanceChoice::AnchorOhm(_) => None,
    });
    let anchor_label = Memo::new(move |_| {
        use hysteron_core::topology::Circuit;
        nb.with_current(|r| r.circuit.anchor_description()).unwrap_or("")
    });
    let caution_list = Memo::new(move |_| nb.with_settled(cautions).unwrap_or_default());
    view! {
        <section class="card" aria-labelledby="purpose-heading" id="purpose">
            <h2 id="purpose-heading">"Purpose and targets"</h2>
            <div class="field">
                <label for="design-name">"Name"</label>
                <input id="design-name" type="text" prop:value=name
                    on:input=move |ev| { let v = event_target_value(&ev); nb.edit_keyed("name", |r| r.name = v); } />
            </div>
            <div class="field">
                <label for="design-purpose">"What it is for, and the signal it sees"</label>
                <textarea id="design-purpose" rows="2" prop:value=purpose
                    on:input=move |ev| { let v = event_target_value(&ev); nb.edit_keyed("purpose", |r| r.purpose = v); }></textarea>
            </div>
            <fieldset class="plain">
                <legend>"Thresholds wanted"</legend>
                <div class="row">
                    <label><input type="checkbox" id="targets-by-centre" prop:checked=move || by_centre.get()
                        on:change=move |ev| by_centre.set(event_target_checked(&ev)) />" enter as centre and width"</label>
                    {move || targets.get().is_none().then(|| view! { <span class="note">"(no targets yet: the fields show this design's present thresholds; enter the ones you want to let Hysteron choose parts)"</span> })}
                </div>
                <div class="field-grid">
                    {move || if by_centre.get() {
                        view! {
                            {thresholds_field("target-centre", "Centre", |t| t.thresholds().centre_v(), |t, v| {
                                let n = Thresholds::from_centre_width(v, t.thresholds().hysteresis_v());
                                t.vt_upper_v = n.vt_upper_v; t.vt_lower_v = n.vt_lower_v; })}
                            {thresholds_field("target-width", "Hysteresis width", |t| t.thresholds().hysteresis_v(), |t, v| {
                                let n = Thresholds::from_centre_width(t.thresholds().centre_v(), v);
                                t.vt_upper_v = n.vt_upper_v; t.vt_lower_v = n.vt_lower_v; })}
                        }.into_any()
                    } else {
                        view! {
                            {thresholds_field("target-vt-upper", "VT+ wanted (trip point, rising)", |t| t.vt_upper_v, |t, v| t.vt_upper_v = v)}
                            {thresholds_field("target-vt-lower", "VT− wanted (release point, falling)", |t| t.vt_lower_v, |t, v| t.vt_lower_v = v)}
                        }.into_any()
                    }}
                    <OptionalQuantityField id="target-anchor".to_string() label="Impedance: value of the anchor resistor".to_string() unit="Ω" value=anchor
                        on_value=Callback::new(move |v: Option<f64>| if let Some(v) = v {
                            set_t("target-anchor", Box::new(move |t| t.impedance = ImpedanceChoice::AnchorOhm(v)))
                        }) />
                    <OptionalQuantityField id="target-budget".to_string() label="…or a current budget for the network".to_string() unit="A" value=budget
                        check=Callback::new(|a: f64| (a <= 0.0).then(|| format!("must be above zero (got {})", format_with_unit(a, 3, Unit::Ampere))))
                        on_value=Callback::new(move |v: Option<f64>| set_t("target-budget", Box::new(move |t| {
                            t.impedance = match v { Some(a) => ImpedanceChoice::CurrentBudgetA(a), None => ImpedanceChoice::AnchorOhm(100e3) };
                        }))) />
                </div>
                <p class="note">"Anchor resistor: " {anchor_label}</p>
            </fieldset>
            <fieldset class="plain">
                <legend>"Operating range"</legend>
                <div class="field-grid">
                    {check("check-supply-min", "Supply minimum", |c| c.supply_min_v, |c, v| c.supply_min_v = v)}
                    {check("check-supply-max", "Supply maximum", |c| c.supply_max_v, |c, v| c.supply_max_v = v)}
                    {check("check-input-min", "Lowest input the signal reaches", |c| c.input_min_v, |c, v| c.input_min_v = v)}
                    {check("check-input-max", "Highest input the signal reaches", |c| c.input_max_v, |c, v| c.input_max_v = v)}
                    {check("check-recovery", "Rail recovery when the load drops off (monitors)", |c| (c.expected_recovery_v > 0.0).then_some(c.expected_recovery_v), |c, v| c.expected_recovery_v = v.unwrap_or(0.0))}
                </div>
            </fieldset>
            {move || {
                let list = caution_list.get();
                (!list.is_empty()).then(|| view! {
                    <div class="caution" role="note" id="cautions">
                        <strong>"Safety"</strong>
                        <ul>{list.into_iter().map(|c| view! { <li>{c.message}</li> }).collect_view()}</ul>
                        <p>{hysteron_core::safety::ARITHMETIC_ONLY}</p>
                    </div>
                })
            }}
        </section>
    }
}
