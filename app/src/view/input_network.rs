//! The input network in front of the trigger: dropper, series resistor, clamp, RC filter; the
//! thresholds at the field terminal, clamp current, dissipation, the filter's corner and delay.
//! All figures come from `core::input_network`.

use super::state::Notebook;
use crate::fields::{OptionalQuantityField, QuantityField};
use hysteron_core::input_network::{Clamp, Dropper, InputNetwork, RcFilter};
use hysteron_core::notation::{format_with_unit, Unit};
use leptos::prelude::*;

fn v(x: f64) -> String {
    format_with_unit(x, 4, Unit::Volt)
}

fn a(x: f64) -> String {
    format_with_unit(x, 3, Unit::Ampere)
}

fn w(x: f64) -> String {
    if x >= 1.0 { format!("{x:.3} W") } else { format!("{:.3} mW", x * 1e3) }
}

/// The network in words, in schematic order from the field terminal to the pin.
fn chain(n: &InputNetwork) -> String {
    let ohm = |x: f64| format_with_unit(x, 3, Unit::Ohm);
    let mut parts = vec!["field terminal".to_string()];
    if let Some(d) = n.dropper {
        parts.push(format!("dropper {} / {} to ground", ohm(d.top_ohm), ohm(d.bottom_ohm)));
    }
    if let Some(r) = n.series_ohm {
        parts.push(format!("series {}", ohm(r)));
    }
    match n.clamp {
        Clamp::RailDiodes { forward_v, .. } => parts.push(format!("diodes to both rails (Vf {})", v(forward_v))),
        Clamp::Tvs { standoff_v, .. } => parts.push(format!("TVS to ground ({} standoff)", v(standoff_v))),
        Clamp::None => {}
    }
    if let Some(f) = n.filter {
        parts.push(format!("filter {} with {} to ground", ohm(f.r_ohm), format_with_unit(f.c_f, 3, Unit::Farad)));
    }
    parts.push("trigger input".into());
    if parts.len() == 2 {
        return "No network: the field terminal is the trigger's input.".into();
    }
    format!("Network: {}.", parts.join(" → "))
}

/// The input-network section.
#[component]
pub fn InputNetworkSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let net = Memo::new(move |_| nb.with_current(|r| r.input_network.clone()).flatten().unwrap_or_default());
    let edit = move |key: &'static str, f: Box<dyn Fn(&mut InputNetwork)>| {
        nb.edit_keyed(key, move |r| {
            let mut n = r.input_network.clone().unwrap_or_default();
            f(&mut n);
            r.input_network = (n != InputNetwork::default()).then_some(n);
        })
    };
    let report = Memo::new(move |_| {
        nb.with_settled(|r| {
            // The record's own report (under the output load when it has output dynamics), as the
            // CLI result and the sheet give it.
            hysteron_core::input_network::from_record::record_network(r).map(|x| x.map_err(|e| e.to_string()))
        })
        .flatten()
    });
    let opt = move |id: &'static str, label: &'static str, unit: &'static str, get: fn(&InputNetwork) -> Option<f64>, put: fn(&mut InputNetwork, Option<f64>)| {
        view! { <OptionalQuantityField id=id.to_string() label=label.to_string() unit
            value=Signal::derive(move || get(&net.get()))
            on_value=Callback::new(move |x| edit(id, Box::new(move |n| put(n, x)))) /> }
    };
    let req = move |id: &'static str, label: &'static str, unit: &'static str, get: fn(&InputNetwork) -> f64, put: fn(&mut InputNetwork, f64)| {
        view! { <QuantityField id=id.to_string() label=label.to_string() unit
            value=Signal::derive(move || get(&net.get()))
            on_value=Callback::new(move |x| edit(id, Box::new(move |n| put(n, x)))) /> }
    };
    let clamp_kind = move || match net.get().clamp {
        Clamp::None => "none",
        Clamp::RailDiodes { .. } => "rail_diodes",
        Clamp::Tvs { .. } => "tvs",
    };
    view! {
        <section class="card" aria-labelledby="net-heading" id="input-network">
            <h2 id="net-heading">"Input network"</h2>
            <p class="hint">"From the field terminal to the trigger's input: dropper, series resistor, clamp, RC filter."</p>
            <div class="row no-print">
                <label><input type="checkbox" id="net-use-dropper" prop:checked=move || net.get().dropper.is_some()
                    on:change=move |ev| { let on = event_target_checked(&ev); edit("", Box::new(move |n| n.dropper = on.then_some(Dropper { top_ohm: 100e3, bottom_ohm: 10e3 }))); } />
                    " Dropper (two resistors)"</label>
                <label><input type="checkbox" id="net-use-filter" prop:checked=move || net.get().filter.is_some()
                    on:change=move |ev| { let on = event_target_checked(&ev); edit("", Box::new(move |n| n.filter = on.then_some(RcFilter { r_ohm: 10e3, c_f: 100e-9 }))); } />
                    " RC filter"</label>
                <label>"Clamp "
                    <select id="net-clamp" prop:value=clamp_kind on:change=move |ev| {
                        let k = event_target_value(&ev);
                        edit("", Box::new(move |n| n.clamp = match k.as_str() {
                            // Starting values (common practice): a small-signal Schottky pair; a 26 V standoff TVS.
                            "rail_diodes" => Clamp::RailDiodes { forward_v: 0.3, max_current_a: 0.2 },
                            "tvs" => Clamp::Tvs { standoff_v: 26.0, breakdown_v: 28.9, clamping_v: 42.1, peak_current_a: 9.5 },
                            _ => Clamp::None,
                        }));
                    }>
                        <option value="none">"none"</option>
                        <option value="rail_diodes">"diodes to the rails"</option>
                        <option value="tvs">"TVS to ground"</option>
                    </select>
                </label>
            </div>
            <div class="field-grid">
                {move || net.get().dropper.map(|_| view! {
                    {req("net-top", "Dropper top", "Ω", |n| n.dropper.map_or(f64::NAN, |d| d.top_ohm), |n, x| if let Some(d) = n.dropper.as_mut() { d.top_ohm = x })}
                    {req("net-bottom", "Dropper bottom", "Ω", |n| n.dropper.map_or(f64::NAN, |d| d.bottom_ohm), |n, x| if let Some(d) = n.dropper.as_mut() { d.bottom_ohm = x })}
                })}
                {opt("net-series", "Series resistor", "Ω", |n| n.series_ohm, |n, x| n.series_ohm = x)}
                {move || match net.get().clamp {
                    Clamp::RailDiodes { .. } => Some(view! {
                        {req("net-vf", "Diode forward drop", "V", |n| match n.clamp { Clamp::RailDiodes { forward_v, .. } => forward_v, _ => f64::NAN }, |n, x| if let Clamp::RailDiodes { forward_v, .. } = &mut n.clamp { *forward_v = x })}
                        {req("net-if", "Diode current rating", "A", |n| match n.clamp { Clamp::RailDiodes { max_current_a, .. } => max_current_a, _ => f64::NAN }, |n, x| if let Clamp::RailDiodes { max_current_a, .. } = &mut n.clamp { *max_current_a = x })}
                    }.into_any()),
                    Clamp::Tvs { .. } => Some(view! {
                        {req("net-standoff", "TVS standoff", "V", |n| match n.clamp { Clamp::Tvs { standoff_v, .. } => standoff_v, _ => f64::NAN }, |n, x| if let Clamp::Tvs { standoff_v, .. } = &mut n.clamp { *standoff_v = x })}
                        {req("net-breakdown", "TVS breakdown", "V", |n| match n.clamp { Clamp::Tvs { breakdown_v, .. } => breakdown_v, _ => f64::NAN }, |n, x| if let Clamp::Tvs { breakdown_v, .. } = &mut n.clamp { *breakdown_v = x })}
                        {req("net-clamping", "TVS clamping voltage", "V", |n| match n.clamp { Clamp::Tvs { clamping_v, .. } => clamping_v, _ => f64::NAN }, |n, x| if let Clamp::Tvs { clamping_v, .. } = &mut n.clamp { *clamping_v = x })}
                        {req("net-ipp", "TVS peak pulse current", "A", |n| match n.clamp { Clamp::Tvs { peak_current_a, .. } => peak_current_a, _ => f64::NAN }, |n, x| if let Clamp::Tvs { peak_current_a, .. } = &mut n.clamp { *peak_current_a = x })}
                    }.into_any()),
                    Clamp::None => None,
                }}
                {move || net.get().filter.map(|_| view! {
                    {req("net-rf", "Filter resistor", "Ω", |n| n.filter.map_or(f64::NAN, |f| f.r_ohm), |n, x| if let Some(f) = n.filter.as_mut() { f.r_ohm = x })}
                    {req("net-cf", "Filter capacitor", "F", |n| n.filter.map_or(f64::NAN, |f| f.c_f), |n, x| if let Some(f) = n.filter.as_mut() { f.c_f = x })}
                })}
                {opt("net-field-max", "Highest field voltage", "V", |n| n.field_max_v, |n, x| n.field_max_v = x)}
                {opt("net-field-min", "Lowest field voltage", "V", |n| n.field_min_v, |n, x| n.field_min_v = x)}
                {opt("net-surge", "Surge (both polarities)", "V", |n| n.surge_v, |n, x| n.surge_v = x)}
                {opt("net-edge", "Slowest edge (whole span)", "s", |n| n.slowest_edge_s, |n, x| n.slowest_edge_s = x)}
                {opt("net-freq", "Signal frequency (phase lag)", "Hz", |n| n.signal_frequency_hz, |n, x| n.signal_frequency_hz = x)}
            </div>
            <p id="net-chain" class="hint">{move || chain(&net.get())}</p>
            {move || report.get().map(|r| match r {
                Err(e) => view! { <p class="error" id="net-error">{e}</p> }.into_any(),
                Ok(r) => {
                    let worst = r.worst();
                    view! {
                        <p id="net-thresholds">"At the field terminal VT+ "
                            <output id="net-field-upper" data-value=r.field.vt_upper_v.to_string()>{v(r.field.vt_upper_v)}</output>
                            " and VT− "
                            <output id="net-field-lower" data-value=r.field.vt_lower_v.to_string()>{v(r.field.vt_lower_v)}</output>
                            {format!(" (at the pin {} and {}; network resistance {}, divider ratio {:.4}).",
                                v(r.pin.vt_upper_v), v(r.pin.vt_lower_v), format_with_unit(r.source_resistance_ohm, 3, Unit::Ohm), r.gain)}
                        </p>
                        <p id="net-clamp">{format!(
                            "Clamp current {} at the highest input ({}){}; worst {} at {}: clamp {}, series resistor {}{}.",
                            a(r.at_max.clamp_current_a.abs()), v(r.at_max.field_v),
                            r.at_surge.map(|(p, n)| format!(", {} / {} at ±{} surge", a(p.clamp_current_a.abs()), a(n.clamp_current_a.abs()), v(p.field_v))).unwrap_or_default(),
                            a(worst.clamp_current_a.abs()), v(worst.field_v), w(worst.clamp_power_w), w(worst.series_power_w),
                            if worst.dropper_top_power_w > 0.0 { format!(", dropper {} / {}", w(worst.dropper_top_power_w), w(worst.dropper_bottom_power_w)) } else { String::new() })}</p>
                        {r.filter.map(|f| view! {
                            <p id="net-filter">"Filter corner "
                                <output id="net-corner" data-value=f.corner_hz.to_string()>{format_with_unit(f.corner_hz, 3, Unit::Hertz)}</output>
                                {format!(" (τ {}){}{}.",
                                    format_with_unit(f.time_constant_s, 3, Unit::Second),
                                    r.upper.edge_delay_s.map(|d| format!("; delay at the slowest edge {} (VT+)", format_with_unit(d, 3, Unit::Second))).unwrap_or_default(),
                                    f.phase_lag_deg.map(|p| format!("; phase lag {p:.2}° at the signal frequency")).unwrap_or_default())}
                            </p>
                        })}
                        <ul class="warnings" id="net-warnings">
                            {r.warnings.into_iter().map(|m| view! { <li>{m}</li> }).collect_view()}
                        </ul>
                    }.into_any()
                }
            })}
        </section>
    }
}
