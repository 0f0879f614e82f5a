//! Temperature: VT+ and VT− versus temperature over the operating range of the tolerance
//! settings, with the drift in mV/K, and the drift coefficients that feed it (resistor tracking,
//! the device's offset drift and bias-current coefficient, a gate's threshold coefficient). The
//! sweep comes from `core::overview::temperature`; this file only draws it.

use super::state::Notebook;
use crate::fields::{OptionalQuantityField, QuantityField};
use crate::plot::colours;
use hysteron_core::overview::temperature;
use hysteron_core::tolerance::temperature::{device_drift, set_device_drift, DeviceDrift};
use hysteron_core::tolerance::TemperatureSweep;
use leptos::html::Canvas;
use leptos::prelude::*;
use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use web_sys::HtmlCanvasElement;

fn per_k(x: Option<f64>) -> String {
    x.map_or("—".to_string(), |v| format!("{:.3} mV/K", v * 1e3))
}

/// Draws VT+ and VT− (lines) with their bands (thin lines) against temperature.
fn draw(canvas: &HtmlCanvasElement, s: &TemperatureSweep) -> Result<(), String> {
    let s = s.clone();
    crate::plot::draw_kept(canvas, move |c, dpr| paint(c, &s, dpr))
}

/// Paints the chart into a canvas already sized to its screen size × `dpr`.
fn paint(canvas: &HtmlCanvasElement, s: &TemperatureSweep, dpr: f64) -> Result<(), String> {
    let err = |e: &dyn std::fmt::Display| format!("plot: {e}");
    let backend = CanvasBackend::with_canvas_object(canvas.clone()).ok_or("plot: no 2D canvas")?;
    let root = backend.into_drawing_area();
    root.fill(&WHITE).map_err(|e| err(&e))?;
    let (first, last) = match (s.points.first(), s.points.last()) {
        (Some(a), Some(b)) => (a.temperature_c, b.temperature_c),
        _ => return Err("plot: no points".into()),
    };
    let (x0, x1) = if last > first { (first, last) } else { (first - 1.0, first + 1.0) };
    let y0 = s.points.iter().map(|p| p.vt_lower_min_v.min(p.vt_upper_min_v)).fold(f64::INFINITY, f64::min);
    let y1 = s.points.iter().map(|p| p.vt_upper_max_v.max(p.vt_lower_max_v)).fold(f64::NEG_INFINITY, f64::max);
    if !(y0.is_finite() && y1.is_finite()) {
        return Err("plot: nothing to draw".into());
    }
    let pad = ((y1 - y0) * 0.08).max(1e-3);
    let font = (11.0 * dpr) as u32;
    let mut chart = ChartBuilder::on(&root)
        .margin((8.0 * dpr) as u32)
        .x_label_area_size((30.0 * dpr) as u32)
        .y_label_area_size((52.0 * dpr) as u32)
        .build_cartesian_2d(x0..x1, (y0 - pad)..(y1 + pad))
        .map_err(|e| err(&e))?;
    chart
        .configure_mesh()
        .x_desc("temperature (°C)")
        .y_desc("V")
        .label_style(("sans-serif", font).into_font().color(&colours::INK))
        .axis_desc_style(("sans-serif", font).into_font().color(&colours::INK))
        .light_line_style(RGBColor(0xee, 0xee, 0xee))
        .draw()
        .map_err(|e| err(&e))?;
    let w = (2.0 * dpr) as u32;
    let thin = dpr.max(1.0) as u32;
    type Pick = fn(&hysteron_core::tolerance::TemperaturePoint) -> f64;
    let series: [(Pick, RGBColor, u32); 6] = [
        (|p| p.vt_upper_v, colours::RISING, w),
        (|p| p.vt_upper_min_v, colours::RISING, thin),
        (|p| p.vt_upper_max_v, colours::RISING, thin),
        (|p| p.vt_lower_v, colours::FALLING, w),
        (|p| p.vt_lower_min_v, colours::FALLING, thin),
        (|p| p.vt_lower_max_v, colours::FALLING, thin),
    ];
    for (pick, colour, width) in series {
        let pts: Vec<(f64, f64)> = s.points.iter().map(|p| (p.temperature_c, pick(p))).collect();
        chart.draw_series(LineSeries::new(pts, colour.stroke_width(width))).map_err(|e| err(&e))?;
    }
    root.present().map_err(|e| err(&e))?;
    Ok(())
}

/// The temperature section.
#[component]
pub fn TemperatureSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let sweep = Memo::new(move |_| {
        nb.with_settled(|r| temperature(r).map_err(|e| e.to_string())).unwrap_or_else(|| Err("no design open".into()))
    });
    let drift = Memo::new(move |_| nb.with_current(|r| device_drift(&r.circuit)).unwrap_or_default());
    let tracking = Memo::new(move |_| {
        nb.with_current(|r| r.tolerance.as_ref().and_then(|t| t.resistor_tracking_ppm_per_k)).flatten()
    });
    let set_drift = move |key: &'static str, d: DeviceDrift| nb.edit_keyed(key, move |r| set_device_drift(&mut r.circuit, d));
    let canvas: NodeRef<Canvas> = NodeRef::new();
    // Redrawn on every window resize too, so the plot follows its box at any width.
    let resized = RwSignal::new(0_u32);
    let listener = window_event_listener(leptos::ev::resize, move |_| resized.update(|n| *n = n.wrapping_add(1)));
    on_cleanup(move || listener.remove());
    Effect::new(move |_| {
        resized.track();
        sweep.with(|s| {
            if let (Ok(s), Some(c)) = (s, canvas.get()) {
                let _ = draw(&c, s);
            }
        })
    });
    view! {
        <section class="card" aria-labelledby="temperature-heading" id="temperature">
            <h2 id="temperature-heading">"Temperature"</h2>
            <p class="note">"VT+ and VT− over the operating range set under Tolerance, parts at their entered values; the thin lines bound the coefficients of unknown sign."</p>
            <div class="field-grid">
                <OptionalQuantityField id="temp-tracking".to_string() label="Resistors track within (one network)".to_string() unit="ppm/K"
                    value=Signal::derive(move || tracking.get())
                    on_value=Callback::new(move |v| nb.edit_keyed("temp-tracking", move |r| {
                        let mut s = r.tolerance.clone().unwrap_or_default();
                        s.resistor_tracking_ppm_per_k = v;
                        r.tolerance = Some(s);
                    })) />
                {move || drift.get().offset_drift_v_per_k.map(|_| view! {
                    <QuantityField id="temp-offset-drift".to_string() label="Offset drift |ΔVOS/ΔT|".to_string() unit="µV/K"
                        value=Signal::derive(move || drift.get().offset_drift_v_per_k.unwrap_or(0.0) * 1e6)
                        on_value=Callback::new(move |v: f64| set_drift("temp-offset-drift", DeviceDrift { offset_drift_v_per_k: Some(v * 1e-6), ..DeviceDrift::default() })) />
                    <QuantityField id="temp-bias-tempco".to_string() label="Bias current change".to_string() unit="%/K"
                        value=Signal::derive(move || drift.get().bias_tempco_pct_per_k.unwrap_or(0.0))
                        on_value=Callback::new(move |v: f64| set_drift("temp-bias-tempco", DeviceDrift { bias_tempco_pct_per_k: Some(v), ..DeviceDrift::default() })) />
                })}
                {move || drift.get().threshold_tempco_v_per_k.map(|_| view! {
                    <QuantityField id="temp-gate-tempco".to_string() label="Gate threshold coefficient".to_string() unit="mV/K"
                        value=Signal::derive(move || drift.get().threshold_tempco_v_per_k.unwrap_or(0.0) * 1e3)
                        on_value=Callback::new(move |v: f64| set_drift("temp-gate-tempco", DeviceDrift { threshold_tempco_v_per_k: Some(v * 1e-3), ..DeviceDrift::default() })) />
                })}
            </div>
            {move || match sweep.get() {
                Err(e) => view! { <p class="error" id="temperature-error" role="alert">{e}</p> }.into_any(),
                Ok(s) => view! {
                    <table class="grid" id="temperature-drift">
                        <thead><tr><th></th><th>"drift over the range"</th><th>"at most (coefficients at their limits)"</th></tr></thead>
                        <tbody>
                            <tr id="temp-drift-upper"><td>"VT+"</td><td>{per_k(s.vt_upper_drift_v_per_k)}</td><td>{format!("± {}", per_k(s.vt_upper_drift_bound_v_per_k))}</td></tr>
                            <tr id="temp-drift-lower"><td>"VT−"</td><td>{per_k(s.vt_lower_drift_v_per_k)}</td><td>{format!("± {}", per_k(s.vt_lower_drift_bound_v_per_k))}</td></tr>
                        </tbody>
                    </table>
                    {s.notes.iter().map(|n| view! { <p class="note">{n.clone()}</p> }).collect_view()}
                }.into_any(),
            }}
            <figure class="plot">
                <canvas id="temperature-plot" node_ref=canvas role="img" aria-label="VT+ and VT− versus temperature"></canvas>
                <figcaption>"VT+ and VT− against temperature: thick lines with the drifts of known sign, thin lines the band from coefficients of unknown sign."</figcaption>
            </figure>
        </section>
    }
}
