//! Output dynamics and power-up state: the settings fields and the figures from
//! `core::overview::dynamics` (edges at the load, thresholds under load, speed-up capacitor,
//! slow-input chatter check, the state after a supply ramp). This file only renders.

use super::state::Notebook;
use crate::fields::{OptionalQuantityField, QuantityField};
use hysteron_core::analysis::OutputState;
use hysteron_core::limits::Quantity;
use hysteron_core::notation::{format_with_unit, Unit};
use hysteron_core::output_dynamics::OutputDynamicsSettings;
use hysteron_core::power_up::PowerUpSettings;
use leptos::prelude::*;

fn secs(x: f64) -> String {
    format_with_unit(x, 3, Unit::Second)
}

fn state_word(s: Option<OutputState>) -> &'static str {
    match s {
        Some(OutputState::High) => "high",
        Some(OutputState::Low) => "low",
        None => "either (not guaranteed)",
    }
}

/// The output dynamics and power-up section.
#[component]
pub fn OutputDynamicsSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let settings = Memo::new(move |_| nb.with_current(|r| r.output_dynamics).flatten());
    let power = Memo::new(move |_| nb.with_current(|r| r.power_up).flatten());
    let results = Memo::new(move |_| {
        nb.with_settled(|r| {
            let (od, pu) = hysteron_core::overview::dynamics(r);
            (od.map(|x| x.map_err(|e| e.to_string())), pu.map(|x| x.map_err(|e| e.to_string())))
        })
        .unwrap_or((None, None))
    });
    let edit = move |key: &'static str, f: fn(&mut OutputDynamicsSettings, Option<f64>), v: Option<f64>| {
        nb.edit_keyed(key, move |r| {
            let mut s = r.output_dynamics.unwrap_or_default();
            f(&mut s, v);
            r.output_dynamics = Some(s);
        })
    };
    let edit_power = move |key: &'static str, f: fn(&mut PowerUpSettings, Option<f64>), v: Option<f64>| {
        nb.edit_keyed(key, move |r| {
            let mut s = r.power_up.unwrap_or_default();
            f(&mut s, v);
            r.power_up = Some(s);
        })
    };
    let get = move |f: fn(&OutputDynamicsSettings) -> f64| Signal::derive(move || f(&settings.get().unwrap_or_default()));
    let get_opt = move |f: fn(&OutputDynamicsSettings) -> Option<f64>| Signal::derive(move || settings.get().and_then(|s| f(&s)));
    let get_power = move |f: fn(&PowerUpSettings) -> f64| Signal::derive(move || f(&power.get().unwrap_or_default()));
    view! {
        <section class="card" aria-labelledby="dynamics-heading" id="output-dynamics">
            <h2 id="dynamics-heading">"Output dynamics and power-up"</h2>
            <p class="note">"Slew rate, output resistance and load: edges at the load, thresholds under load, a speed-up capacitor across the feedback resistor and a slow-input chatter check. Leave the fields empty for an ideal output."</p>
            <div class="field-grid">
                <OptionalQuantityField id="od-slew".to_string() label="Slew rate".to_string() unit="V/µs" quantity=Quantity::SlewRate
                    value=get_opt(|s| s.slew_rate_v_per_us)
                    on_value=Callback::new(move |v| edit("od-slew", |s, v| s.slew_rate_v_per_us = v, v)) />
                <QuantityField id="od-ro".to_string() label="Output resistance Ro".to_string() unit="Ω"
                    value=get(|s| s.output_resistance_ohm)
                    on_value=Callback::new(move |v: f64| edit("od-ro", |s, v| s.output_resistance_ohm = v.unwrap_or(0.0), Some(v))) />
                <OptionalQuantityField id="od-rl".to_string() label="Load resistance RL (to 0 V)".to_string() unit="Ω"
                    value=get_opt(|s| s.load_resistance_ohm)
                    on_value=Callback::new(move |v| edit("od-rl", |s, v| s.load_resistance_ohm = v, v)) />
                <QuantityField id="od-cl".to_string() label="Load capacitance CL".to_string() unit="F"
                    value=get(|s| s.load_capacitance_f)
                    on_value=Callback::new(move |v: f64| edit("od-cl", |s, v| s.load_capacitance_f = v.unwrap_or(0.0), Some(v))) />
                <OptionalQuantityField id="od-cs".to_string() label="Speed-up capacitor Cs".to_string() unit="F"
                    value=get_opt(|s| s.speedup_capacitance_f)
                    on_value=Callback::new(move |v| edit("od-cs", |s, v| s.speedup_capacitance_f = v, v)) />
                <OptionalQuantityField id="od-tpd".to_string() label="Propagation delay".to_string() unit="s"
                    value=get_opt(|s| s.propagation_delay_s)
                    on_value=Callback::new(move |v| edit("od-tpd", |s, v| s.propagation_delay_s = v, v)) />
                <QuantityField id="od-noise".to_string() label="Input noise (RMS)".to_string() unit="V"
                    value=get(|s| s.noise_rms_v)
                    on_value=Callback::new(move |v: f64| edit("od-noise", |s, v| s.noise_rms_v = v.unwrap_or(0.0), Some(v))) />
                <QuantityField id="od-slope".to_string() label="Slowest input slope".to_string() unit="V/s" quantity=Quantity::Slope
                    value=get(|s| s.input_slope_v_per_s)
                    on_value=Callback::new(move |v: f64| edit("od-slope", |s, v| s.input_slope_v_per_s = v.unwrap_or(0.0), Some(v))) />
            </div>
            {move || match results.get().0 {
                None => view! { <p class="note">"No output dynamics entered: the output is ideal."</p> }.into_any(),
                Some(Err(e)) => view! { <p class="error" id="dynamics-error" role="alert">{e}</p> }.into_any(),
                Some(Ok(r)) => view! {
                    <table class="grid" id="dynamics-edges">
                        <thead><tr><th></th><th>"10–90 % (exact)"</th><th>"slew alone"</th><th>"RC alone"</th><th>"root-sum-square (approx.)"</th></tr></thead>
                        <tbody>
                            <tr><td>"rise"</td><td id="dynamics-rise">{secs(r.rise.t10_90_s)}</td><td>{secs(r.rise.slew_only_s)}</td><td>{secs(r.rise.rc_only_s)}</td><td>{secs(r.rise.rss_estimate_s)}</td></tr>
                            <tr><td>"fall"</td><td id="dynamics-fall">{secs(r.fall.t10_90_s)}</td><td>{secs(r.fall.slew_only_s)}</td><td>{secs(r.fall.rc_only_s)}</td><td>{secs(r.fall.rss_estimate_s)}</td></tr>
                        </tbody>
                    </table>
                    <p id="dynamics-load">{r.load.note.clone()}</p>
                    <p id="dynamics-speedup">{r.speedup.suggested_f.map(|c| format!("Suggested speed-up capacitor: {}. ", format_with_unit(c, 2, Unit::Farad))).unwrap_or_default()}{r.speedup.note.clone()}</p>
                    <p id="dynamics-chatter">{format!(
                        "Slow-input check: hysteresis {:.2} mV + input progress {:.2} mV − noise p-p {:.2} mV − coupled edge {:.2} mV = margin {:.2} mV.",
                        r.chatter.hysteresis_v * 1e3, r.chatter.input_progress_v * 1e3, r.chatter.noise_peak_to_peak_v * 1e3, r.chatter.coupled_v * 1e3, r.chatter.margin_v * 1e3)}</p>
                    {r.warnings.iter().map(|w| view! { <p class="warning" role="alert">{w.message.clone()}</p> }).collect_view()}
                }.into_any(),
            }}
            <h3>"Power-up"</h3>
            <div class="field-grid">
                <QuantityField id="pu-ramp".to_string() label="Supply ramp time".to_string() unit="s"
                    value=get_power(|s| s.ramp_time_s)
                    on_value=Callback::new(move |v: f64| edit_power("pu-ramp", |s, v| s.ramp_time_s = v.unwrap_or(0.0), Some(v))) />
                <QuantityField id="pu-vmin".to_string() label="Minimum operating supply".to_string() unit="V"
                    value=get_power(|s| s.minimum_supply_v)
                    on_value=Callback::new(move |v: f64| edit_power("pu-vmin", |s, v| s.minimum_supply_v = v.unwrap_or(0.0), Some(v))) />
                <OptionalQuantityField id="pu-ref-tau".to_string() label="Reference filter time constant".to_string() unit="s"
                    value=Signal::derive(move || power.get().and_then(|p| p.reference_time_constant_s))
                    on_value=Callback::new(move |v| edit_power("pu-ref-tau", |s, v| s.reference_time_constant_s = v, v)) />
            </div>
            {move || match results.get().1 {
                None => view! { <p class="note">"Enter a ramp time or minimum supply to study the power-up state."</p> }.into_any(),
                Some(Err(e)) => view! { <p class="error" id="power-up-error" role="alert">{e}</p> }.into_any(),
                Some(Ok(r)) => view! {
                    <table class="grid" id="power-up-regions">
                        <thead><tr><th>"input from"</th><th>"to"</th><th>"output settles"</th></tr></thead>
                        <tbody>
                            {r.regions.iter().map(|x| view! { <tr><td>{format!("{:.3} V", x.from_v)}</td><td>{format!("{:.3} V", x.to_v)}</td><td>{state_word(x.state)}</td></tr> }).collect_view()}
                        </tbody>
                    </table>
                    {r.notes.iter().map(|n| view! { <p class="note">{n.clone()}</p> }).collect_view()}
                }.into_any(),
            }}
        </section>
    }
}
