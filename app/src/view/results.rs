//! Results of the open design: thresholds, levels, warnings and the transfer curve.

use super::state::Notebook;
use crate::plot;
use hysteron_core::analysis::Analysis;
use hysteron_core::overview::quick;
use hysteron_core::topology::TransferCurve;
use leptos::html::Canvas;
use leptos::prelude::*;

fn volts(v: f64) -> String {
    format!("{v:.4} V")
}

/// Shows VT+, VT−, width, centre and the transfer curve; errors appear in place of results.
#[component]
pub fn Results() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    // One call per keystroke: the analysis and the transfer curve over the window core chooses.
    let figures = Memo::new(move |_| nb.with_current(quick));
    let analysis = Memo::new(move |_| {
        figures.with(|q| match q {
            Some(q) => q.analysis.clone().map_err(|e| e.to_string()),
            None => Err("no design open".into()),
        })
    });
    let curve = Memo::new(move |_| figures.with(|q| q.as_ref().and_then(|q| q.curve.clone())));
    // The figures saved with the design are its record for the bench: if today's math gives other
    // numbers (a newer version, say), say so and show both rather than silently changing them.
    let saved = Memo::new(move |_| nb.with_current_entry(|e| e.snapshot.clone()).flatten());
    let differs = move || {
        let s = saved.get()?;
        analysis.with(|a| {
            let a = a.as_ref().ok()?;
            let close = |x: f64, y: f64| (x - y).abs() <= 1e-9 * x.abs().max(y.abs()).max(1e-3);
            (!(close(s.vt_upper_v, a.vt_upper_v) && close(s.vt_lower_v, a.vt_lower_v))).then(|| {
                format!(
                    "Saved with this design: VT+ {:.4} V, VT− {:.4} V (computed by version {}). Computed now: VT+ {:.4} V, VT− {:.4} V. The saved figures are kept until you change the design.",
                    s.vt_upper_v, s.vt_lower_v, s.computed_by, a.vt_upper_v, a.vt_lower_v
                )
            })
        })
    };
    let canvas: NodeRef<Canvas> = NodeRef::new();
    let plot_error = RwSignal::new(None::<String>);
    let frame = StoredValue::new(None::<plot::PlotFrame>);
    let hover = RwSignal::new(String::new());
    Effect::new(move |_| {
        let c: Option<TransferCurve> = curve.get();
        if let (Some(el), Some(c)) = (canvas.get(), c) {
            match plot::draw_transfer(&el, &c) {
                Ok(f) => {
                    frame.set_value(Some(f));
                    plot_error.set(None);
                }
                Err(e) => plot_error.set(Some(e)),
            }
        }
    });
    let on_move = move |ev: leptos::ev::MouseEvent| {
        let v = frame.get_value().and_then(|f| f.value_at(ev.offset_x() as f64, ev.offset_y() as f64));
        hover.set(v.map(|(x, y)| format!("input {x:.3} V, output {y:.3} V")).unwrap_or_default());
    };
    let value = move |f: fn(&Analysis) -> f64| move || analysis.with(|a| a.as_ref().map(f).ok());
    let row = move |id: &'static str, label: &'static str, f: fn(&Analysis) -> f64| {
        let v = value(f);
        view! {
            <tr>
                <th scope="row">{label}</th>
                <td><output id=id data-value=move || v().map(|x| x.to_string()).unwrap_or_default()>
                    {move || v().map(volts).unwrap_or_else(|| "—".into())}
                </output></td>
            </tr>
        }
    };
    view! {
        <section class="card" aria-labelledby="results-heading">
            <h2 id="results-heading">"Results"</h2>
            {move || analysis.with(|a| a.as_ref().err().cloned()).map(|e| view! { <p class="error" id="analysis-error" role="alert">{e}</p> })}
            {move || differs().map(|m| view! { <p class="compare" id="saved-differs" role="status">{m}</p> })}
            <table class="results">
                <tbody>
                    {row("vt-upper", "VT+ (trip point, rising input)", |a| a.vt_upper_v)}
                    {row("vt-lower", "VT− (release point, falling input)", |a| a.vt_lower_v)}
                    {row("hysteresis", "Hysteresis", |a| a.hysteresis_v)}
                    {row("centre", "Centre", |a| a.centre_v)}
                    {row("output-high", "Output high", |a| a.output_high_v)}
                    {row("output-low", "Output low", |a| a.output_low_v)}
                </tbody>
            </table>
            <ul class="warnings">
                {move || analysis.with(|a| a.as_ref().map(|a| a.warnings.clone()).unwrap_or_default())
                    .into_iter().map(|w| view! { <li class="warning">{w.message}</li> }).collect_view()}
            </ul>
            <figure class="plot">
                <canvas id="transfer-plot" node_ref=canvas width="640" height="360"
                    on:mousemove=on_move on:mouseleave=move |_| hover.set(String::new())
                    role="img" aria-label="Transfer curve: output voltage against input voltage, both branches of the hysteresis loop"></canvas>
                <output class="hover" id="transfer-hover" aria-live="off">{move || hover.get()}</output>
                <figcaption>"Transfer curve: rising input (blue) switches at VT+, falling input (orange) at VT−."</figcaption>
                {move || plot_error.get().map(|e| view! { <p class="error">{e}</p> })}
            </figure>
        </section>
    }
}
