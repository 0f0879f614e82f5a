//! The one-page design sheet for the bench, shown only when printing (A4 or US Letter).
//! Everything on it comes from `core`: thresholds, worst case and Monte Carlo yield, the part list,
//! the bench procedure, the signal test summary and the cautions.

use super::share::{schematic_url, StyleChoice};
use super::state::Notebook;
use crate::plot;
use hysteron_core::overview::{curve, sheet, sheet_studies, Sheet, SheetStudies};
use leptos::html::Canvas;
use leptos::prelude::*;

/// Trials used for the sheet's yield when the design asks for more (keeps printing quick).
const SHEET_TRIALS: u64 = 20_000;

/// The printable sheet of the open design.
#[component]
pub fn DesignSheet() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let style = expect_context::<StyleChoice>().0;
    // The sheet is computed only once a print starts (the browser's `beforeprint`), and kept live
    // after that, so editing stays fast.
    let printing = RwSignal::new(0u32);
    let on_print = window_event_listener_untyped("beforeprint", move |_| printing.update(|n| *n += 1));
    on_cleanup(move || on_print.remove());
    let core_figures = Memo::new(move |_| {
        if printing.get() == 0 {
            return None;
        }
        nb.with_current(|r| sheet(r).map_err(|e| e.to_string()))
    });
    let slow = Memo::new(move |_| {
        if printing.get() == 0 {
            return None;
        }
        nb.with_current(|r| sheet_studies(r, SHEET_TRIALS))
    });
    let canvas: NodeRef<Canvas> = NodeRef::new();
    Effect::new(move |_| {
        if printing.get() == 0 {
            return;
        }
        let c = nb.with_current(|r| curve(&r.circuit).ok());
        if let (Some(Some(c)), Some(el)) = (c, canvas.get()) {
            let _ = plot::draw_transfer_fixed(&el, &c, 1000, 420, 2.0);
        }
    });
    let today = String::from(js_sys::Date::new_0().to_iso_string()).chars().take(10).collect::<String>();
    let v = |x: f64| format!("{x:.3} V");
    view! {
        <article class="sheet" id="design-sheet" aria-label="Design sheet for printing">
            <header class="sheet-head">
                <h1>{move || nb.with_current(|r| r.name.clone()).unwrap_or_default()}</h1>
                <p>{move || nb.with_current(|r| r.circuit.name().replace('_', " ")).unwrap_or_default()} " · " {today} " · Hysteron design sheet"</p>
            </header>
            <p class="sheet-purpose">{move || nb.with_current(|r| r.purpose.clone()).unwrap_or_default()}</p>
            {move || core_figures.get().map(|res| match res {
                Err(e) => view! { <p class="error">{e}</p> }.into_any(),
                Ok(Sheet { analysis: a, worst_case: wc, bench, parts, cautions, temperature }) => view! {
                    {(!cautions.is_empty()).then(|| view! {
                        <div class="sheet-caution"><strong>"Safety: "</strong>{cautions.iter().map(|c| c.message.clone()).collect::<Vec<_>>().join(" ")}
                            " Local codes and licensed practice take precedence."</div>
                    })}
                    <div class="sheet-grid">
                        <div>
                            <img class="sheet-schematic" src=move || if printing.get() == 0 { String::new() } else { nb.with_current(|r| schematic_url(r, style.get())).unwrap_or_default() } alt="Schematic" />
                            <canvas class="sheet-curve" node_ref=canvas width="480" height="240" aria-hidden="true"></canvas>
                        </div>
                        <div>
                            <table class="grid sheet-table">
                                <thead><tr><th></th><th>"nominal"</th><th>"worst-case min"</th><th>"worst-case max"</th></tr></thead>
                                <tbody>
                                    <tr><td>"VT+"</td><td id="sheet-vt-upper">{v(a.vt_upper_v)}</td><td>{wc.as_ref().map(|w| v(w.vt_upper.min.value_v))}</td><td>{wc.as_ref().map(|w| v(w.vt_upper.max.value_v))}</td></tr>
                                    <tr><td>"VT−"</td><td>{v(a.vt_lower_v)}</td><td>{wc.as_ref().map(|w| v(w.vt_lower.min.value_v))}</td><td>{wc.as_ref().map(|w| v(w.vt_lower.max.value_v))}</td></tr>
                                    <tr><td>"hysteresis"</td><td>{v(a.hysteresis_v)}</td><td>{wc.as_ref().map(|w| v(w.hysteresis.min.value_v))}</td><td>{wc.as_ref().map(|w| v(w.hysteresis.max.value_v))}</td></tr>
                                </tbody>
                            </table>
                            <p id="sheet-temperature">{temperature.map(|t| format!("Drift with temperature — {t}."))}</p>
                            <p>{move || slow.get().and_then(|SheetStudies { spec_yield, .. }| spec_yield).map(|(f, n)| format!("Monte Carlo yield in the spec window: {:.2} % of {n} boards.", f * 100.0))}</p>
                            <p>{move || slow.get().and_then(|SheetStudies { signal, .. }| signal).map(|s| format!(
                                "Signal test: {} edges from the design{}; the plain comparator gives {} edges{}.",
                                s.design.outcome.edges,
                                s.design.comparison.map(|c| format!(" ({} false)", c.false_edges)).unwrap_or_default(),
                                s.baseline.outcome.edges,
                                s.baseline.comparison.map(|c| format!(" ({} false)", c.false_edges)).unwrap_or_default()))}</p>
                            {parts.map(|b| view! {
                                <table class="grid sheet-table">
                                    <thead><tr><th>"part"</th><th>"value"</th><th>"tol."</th><th>"package"</th><th>"rating"</th></tr></thead>
                                    <tbody>
                                        {b.resistors.iter().map(|r| view! { <tr><td>{r.designator.clone()}</td><td>{format!("{} ({})", r.value_text, r.value_rkm)}</td><td>{format!("{} %", r.tolerance_pct)}</td><td>{r.package.label()}</td><td>{r.suggested_rating_w.map(|w| format!("{w} W")).unwrap_or_default()}</td></tr> }).collect_view()}
                                        <tr><td>{b.device.designator.clone()}</td><td colspan="4">{b.device.description.clone()}</td></tr>
                                    </tbody>
                                </table>
                            })}
                        </div>
                    </div>
                    <div class="sheet-bench">
                        <h2>"Bench test"</h2>
                        <p>{format!("Equipment: {}.", bench.equipment.join("; "))}</p>
                        <ol>{bench.steps.iter().map(|s| view! { <li>{s.instruction.clone()}</li> }).collect_view()}</ol>
                        <p><strong>"If the readings are off: "</strong>{bench.troubleshooting.join(" ")}</p>
                    </div>
                    <p class="sheet-notes">{move || nb.with_current(|r| r.notes.clone()).unwrap_or_default()}</p>
                }.into_any(),
            })}
        </article>
    }
}
