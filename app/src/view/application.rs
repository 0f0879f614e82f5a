//! Applications that ride on the thresholds: the RC relaxation oscillator and the RC switch
//! debouncer (period, duty, delays, and the part values for a target). Math from `core::signal`.

use super::state::Notebook;
use crate::fields::{OptionalQuantityField, QuantityField};
use hysteron_core::signal::debounce::{rc_debounce, DebounceSettings};
use hysteron_core::signal::oscillator::{relaxation_oscillator, OscillatorSettings};
use hysteron_core::signal::report::ApplicationSettings;
use hysteron_core::signal::trigger::TriggerDesign;
use leptos::prelude::*;

fn ms(s: f64) -> String {
    format!("{:.3} ms", s * 1e3)
}

/// The oscillator and debouncer section.
#[component]
pub fn ApplicationSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let app = Memo::new(move |_| nb.with_current(|r| r.application).flatten());
    let edit = move |key: &'static str, f: Box<dyn Fn(&mut ApplicationSettings)>| {
        nb.edit_keyed(key, move |r| {
            let mut a = r.application.unwrap_or_default();
            f(&mut a);
            r.application = Some(a);
        })
    };
    let results = Memo::new(move |_| {
        nb.with_current(|r| {
            let a = r.application?;
            let d = TriggerDesign::from_circuit(&r.circuit).map_err(|e| e.to_string());
            let osc = a.oscillator.map(|o| d.clone().and_then(|d| relaxation_oscillator(&d, &o).map_err(|e| e.to_string())));
            let deb = a.debounce.map(|b| d.clone().and_then(|d| rc_debounce(&d, &b).map_err(|e| e.to_string())));
            Some((osc, deb))
        })
        .flatten()
    });
    let osc_field = move |id: &'static str, label: &'static str, unit: &'static str, get: fn(&OscillatorSettings) -> f64, put: fn(&mut OscillatorSettings, f64)| {
        let value = Signal::derive(move || app.get().and_then(|a| a.oscillator).map(|o| get(&o)).unwrap_or(f64::NAN));
        view! { <QuantityField id=id.to_string() label=label.to_string() unit value on_value=Callback::new(move |v| edit(id, Box::new(move |a| if let Some(o) = a.oscillator.as_mut() { put(o, v) }))) /> }
    };
    let deb_field = move |id: &'static str, label: &'static str, unit: &'static str, get: fn(&DebounceSettings) -> f64, put: fn(&mut DebounceSettings, f64)| {
        let value = Signal::derive(move || app.get().and_then(|a| a.debounce).map(|o| get(&o)).unwrap_or(f64::NAN));
        view! { <QuantityField id=id.to_string() label=label.to_string() unit value on_value=Callback::new(move |v| edit(id, Box::new(move |a| if let Some(o) = a.debounce.as_mut() { put(o, v) }))) /> }
    };
    view! {
        <section class="card" aria-labelledby="app-heading" id="application">
            <h2 id="app-heading">"Oscillator and debouncer"</h2>
            <div class="row no-print">
                <label><input type="checkbox" id="use-oscillator" prop:checked=move || app.get().is_some_and(|a| a.oscillator.is_some())
                    on:change=move |ev| { let on = event_target_checked(&ev); edit("", Box::new(move |a| a.oscillator = on.then(OscillatorSettings::default))); } />
                    " RC relaxation oscillator (output → R → input, C to ground)"</label>
                <label><input type="checkbox" id="use-debounce" prop:checked=move || app.get().is_some_and(|a| a.debounce.is_some())
                    on:change=move |ev| { let on = event_target_checked(&ev); edit("", Box::new(move |a| a.debounce = on.then(DebounceSettings::default))); } />
                    " RC switch debouncer (pull-up, series R, C to ground)"</label>
            </div>
            {move || app.get().and_then(|a| a.oscillator).map(|_| view! {
                <h3>"Oscillator"</h3>
                <div class="field-grid">
                    {osc_field("osc-r", "R", "Ω", |o| o.r_ohm, |o, v| o.r_ohm = v)}
                    {osc_field("osc-c", "C", "F", |o| o.c_f, |o, v| o.c_f = v)}
                    <OptionalQuantityField id="osc-target".to_string() label="Target frequency (solves R)".to_string() unit="Hz"
                        value=Signal::derive(move || app.get().and_then(|a| a.oscillator).and_then(|o| o.target_frequency_hz))
                        on_value=Callback::new(move |v| edit("osc-target", Box::new(move |a| if let Some(o) = a.oscillator.as_mut() { o.target_frequency_hz = v }))) />
                </div>
            })}
            {move || app.get().and_then(|a| a.debounce).map(|_| view! {
                <h3>"Debouncer"</h3>
                <div class="field-grid">
                    {deb_field("deb-r1", "R1 pull-up", "Ω", |d| d.r1_ohm, |d, v| d.r1_ohm = v)}
                    {deb_field("deb-r2", "R2 series", "Ω", |d| d.r2_ohm, |d, v| d.r2_ohm = v)}
                    {deb_field("deb-c", "C", "F", |d| d.c_f, |d, v| d.c_f = v)}
                    {deb_field("deb-bounce", "Longest bounce", "s", |d| d.bounce_s, |d, v| d.bounce_s = v)}
                    {deb_field("deb-supply", "Pull-up supply", "V", |d| d.supply_v, |d, v| d.supply_v = v)}
                </div>
            })}
            {move || results.get().map(|(osc, deb)| view! {
                {osc.map(|r| match r {
                    Err(e) => view! { <p class="error" id="osc-error">{e}</p> }.into_any(),
                    Ok(o) => view! { <p id="osc-result">"Period " <output id="osc-period" data-value=o.period_s.to_string()>{ms(o.period_s)}</output>
                        {format!(" ({:.4} Hz), high {} / low {}, duty {:.1} %", o.frequency_hz, ms(o.t_high_s), ms(o.t_low_s), o.duty * 100.0)}
                        {o.r_for_target_ohm.map(|r| format!("; for the target frequency R = {}", hysteron_core::notation::format_with_unit(r, 4, hysteron_core::notation::Unit::Ohm)))}</p> }.into_any(),
                })}
                {deb.map(|r| match r {
                    Err(e) => view! { <p class="error" id="deb-error">{e}</p> }.into_any(),
                    Ok(d) => view! { <p id="deb-result">{format!("Press: output changes {} after the contact closes; release: {} after it opens. {}",
                        ms(d.press_delay_s), ms(d.release_delay_s),
                        if d.outlasts_bounce { "Both delays outlast the bounce." } else { "A delay is shorter than the bounce: raise R or C." })}</p> }.into_any(),
                })}
            })}
        </section>
    }
}
