//! The one-page design sheet for the bench, shown only when printing (A4 or US Letter).
//! Everything on it comes from `core`: thresholds, the field and bench windows, Monte Carlo yield, the part list,
//! the bench procedure, the signal test summary and the cautions.
//!
//! The sheet prints the design on screen: a shared design being shown (read-only, not yet kept)
//! when there is one, else the open design of the notebook.

use super::share::{schematic_url, Incoming, StyleChoice};
use super::state::Notebook;
use crate::plot;
use hysteron_core::overview::{curve, sheet, sheet_studies, Sheet, SheetStudies};
use hysteron_core::tolerance::bench_window::Windows;
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
    let shown = Memo::new(move |_| match nb.incoming.get() {
        Incoming::Design(r) => Some(*r),
        _ => nb.with_current(|r| r.clone()),
    });
    let with_shown = move |f: &dyn Fn(&hysteron_core::record::DesignRecord) -> String| shown.with(|r| r.as_ref().map(f)).unwrap_or_default();
    let on_print = window_event_listener_untyped("beforeprint", move |_| printing.update(|n| *n += 1));
    on_cleanup(move || on_print.remove());
    let core_figures = Memo::new(move |_| {
        if printing.get() == 0 {
            return None;
        }
        shown.with(|r| r.as_ref().map(|r| sheet(r).map_err(|e| e.to_string())))
    });
    let slow = Memo::new(move |_| {
        if printing.get() == 0 {
            return None;
        }
        shown.with(|r| r.as_ref().map(|r| sheet_studies(r, SHEET_TRIALS)))
    });
    let canvas: NodeRef<Canvas> = NodeRef::new();
    Effect::new(move |_| {
        if printing.get() == 0 {
            return;
        }
        let c = shown.with(|r| r.as_ref().map(|r| curve(&r.circuit).ok()));
        if let (Some(Some(c)), Some(el)) = (c, canvas.get()) {
            let _ = plot::draw_transfer_fixed(&el, &c, 1000, 420, 2.0);
        }
    });
    let today = String::from(js_sys::Date::new_0().to_iso_string()).chars().take(10).collect::<String>();
    let v = |x: f64| format!("{x:.3} V");
    view! {
        <article class="sheet" id="design-sheet" aria-label="Design sheet for printing">
            <header class="sheet-head">
                <h1 id="sheet-name">{move || with_shown(&|r| r.name.clone())}</h1>
                <p>{move || with_shown(&|r| r.circuit.title().to_string())} " · " {today} " · Hysteron design sheet"</p>
            </header>
            <p class="sheet-purpose">{move || with_shown(&|r| r.purpose.clone())}</p>
            {move || core_figures.get().map(|res| match res {
                Err(e) => view! { <p class="error">{e}</p> }.into_any(),
                Ok(Sheet { analysis: a, windows, bench, parts, cautions, temperature, input_network, dynamics, field_terminal }) => {
                let bw = windows.as_ref().and_then(|w| w.bench.first().cloned());
                let range = |lo: f64, hi: f64| format!("{} … {}", v(lo), v(hi));
                // Three rows (VT+, VT−, hysteresis): nominal, field window, bench window at the
                // nominal supply; element ids start with `id`.
                let rows = move |id: &'static str, up: f64, lo: f64, hyst: f64, w: Option<&Windows>| {
                    let field = w.map(|w| w.field.clone());
                    let bench = w.and_then(|w| w.bench.first().cloned());
                    view! {
                        <tr><td>"VT+"</td><td id=format!("{id}-vt-upper")>{v(up)}</td><td id=format!("{id}-field-vt-upper")>{field.as_ref().map(|w| range(w.vt_upper.min.value_v, w.vt_upper.max.value_v))}</td><td id=format!("{id}-bench-vt-upper")>{bench.as_ref().map(|b| range(b.vt_upper_v().0, b.vt_upper_v().1))}</td></tr>
                        <tr><td>"VT−"</td><td id=format!("{id}-vt-lower")>{v(lo)}</td><td>{field.as_ref().map(|w| range(w.vt_lower.min.value_v, w.vt_lower.max.value_v))}</td><td>{bench.as_ref().map(|b| range(b.vt_lower_v().0, b.vt_lower_v().1))}</td></tr>
                        <tr><td>"hysteresis"</td><td>{v(hyst)}</td><td>{field.as_ref().map(|w| range(w.hysteresis.min.value_v, w.hysteresis.max.value_v))}</td><td>{bench.as_ref().map(|b| range(b.worst_case.hysteresis.min.value_v, b.worst_case.hysteresis.max.value_v))}</td></tr>
                    }
                };
                // With an input network the bench drives the field terminal: its figures lead, the
                // pin's follow under their own heading.
                let terminal_rows = field_terminal.map(|t| {
                    let (up, lo) = (t.thresholds.vt_upper_v, t.thresholds.vt_lower_v);
                    view! {
                        <tr class="sheet-group"><th colspan="4">"At the field terminal (the bench drives it)"</th></tr>
                        {rows("sheet-terminal", up, lo, up - lo, t.windows.as_ref())}
                        <tr class="sheet-group"><th colspan="4">"At the trigger's input pin"</th></tr>
                    }
                });
                view! {
                    {(!cautions.is_empty()).then(|| view! {
                        <div class="sheet-caution"><strong>"Safety: "</strong>{cautions.iter().map(|c| c.message.clone()).collect::<Vec<_>>().join(" ")}
                            " Local codes and licensed practice take precedence."</div>
                    })}
                    <div class="sheet-grid">
                        <div>
                            <img class="sheet-schematic" src=move || if printing.get() == 0 { String::new() } else { { let s = style.get(); with_shown(&|r| schematic_url(r, s)) } } alt="Schematic" />
                            <canvas class="sheet-curve" node_ref=canvas width="480" height="240" aria-hidden="true"></canvas>
                            // The studies' one-line findings sit under the curve, so the two columns
                            // stay of similar height and the sheet keeps to one page.
                            <p id="sheet-temperature">{temperature.map(|t| format!("Drift with temperature — {t}."))}</p>
                            <p id="sheet-input-network">{input_network}</p>
                            {dynamics.into_iter().map(|line| view! { <p class="sheet-dynamics">{line}</p> }).collect_view()}
                        </div>
                        <div>
                            <table class="grid sheet-table">
                                <thead><tr><th></th><th>"nominal"</th><th>"field window"</th><th>{bw.as_ref().map(|b| format!("bench window ({:.0} °C, {})", b.temperature_c, v(b.supply_v))).unwrap_or_else(|| "bench window".into())}</th></tr></thead>
                                <tbody>
                                    {terminal_rows}
                                    {rows("sheet", a.vt_upper_v, a.vt_lower_v, a.hysteresis_v, windows.as_ref())}
                                </tbody>
                            </table>
                            <p class="sheet-windows">"Field window: every tolerance over its full range (supply, temperature, device spread, parts). Bench window: part tolerances and device spread only, at room temperature and the supply the bench step sets — accept readings by this one."</p>
                            <p>{move || slow.get().and_then(|SheetStudies { spec_yield, .. }| spec_yield).map(|(f, n)| format!("Monte Carlo yield in the spec window: {:.2} % of {n} boards.", f * 100.0))}</p>
                            <p>{move || slow.get().and_then(|SheetStudies { signal, .. }| signal).map(|s| format!(
                                "Signal test: {} edges from the design{}; the plain comparator gives {} edges{}.",
                                s.design.outcome.edges,
                                s.design.comparison.map(|c| format!(" ({} false)", c.false_edges)).unwrap_or_default(),
                                s.baseline.outcome.edges,
                                s.baseline.comparison.map(|c| format!(" ({} false)", c.false_edges)).unwrap_or_default()))}</p>
                            {parts.map(|b| view! {
                                <table class="grid sheet-table">
                                    <thead><tr><th>"part"</th><th>"value"</th><th>"tol."</th><th>"package"</th><th>"rating*"</th><th>"min. rating"</th></tr></thead>
                                    <tbody>
                                        {b.resistors.iter().map(|r| view! { <tr><td>{r.designator.clone()}</td><td>{format!("{} ({})", r.value_text, r.value_rkm)}</td><td>{format!("{} %", r.tolerance_pct)}</td><td>{r.package.label()}</td><td>{format!("{} W", r.package_rating_w)}</td><td>{r.suggested_rating_w.map(|w| format!("{w} W")).unwrap_or_default()}</td></tr> }).collect_view()}
                                        {b.application.iter().map(|p| view! { <tr><td>{p.designator.clone()}</td><td>{p.value_text.clone()}</td><td></td><td>{p.label.clone()}</td><td></td><td>{p.suggested_rating_w.map(|w| format!("{w} W")).or(p.suggested_voltage_v.map(|v| format!("{v} V"))).unwrap_or_default()}</td></tr> }).collect_view()}
                                        {b.regulators.iter().map(|g| view! { <tr><td>{g.designator.clone()}</td><td colspan="4">{g.description.clone()}</td><td>{g.suggested_rating_w.map(|w| format!("{w} W")).unwrap_or_default()}</td></tr> }).collect_view()}
                                        {b.input_network.iter().map(|p| view! { <tr class="sheet-network"><td>{p.designator.clone()}</td><td>{p.value_text.clone()}</td><td></td><td colspan="2">{p.label.split(" (").next().unwrap_or_default().trim_start_matches("input ").to_string()}</td><td>{p.suggested_power_w.map(|w| format!("{w} W")).into_iter().chain(p.suggested_voltage_v.map(|v| format!("{v} V"))).collect::<Vec<_>>().join(", ")}</td></tr> }).collect_view()}
                                        <tr><td>{b.device.designator.clone()}</td><td colspan="5">{b.device.description.clone()}</td></tr>
                                    </tbody>
                                </table>
                                <p class="sheet-windows">{format!("* {}", hysteron_core::bom::PACKAGE_RATING_BASIS)}</p>
                            })}
                        </div>
                    </div>
                    <div class="sheet-bench">
                        <h2>"Bench test"</h2>
                        <p>{format!("Equipment: {}.", bench.equipment.join("; "))}</p>
                        <ol id="sheet-bench-steps">{bench.steps.iter().map(|s| view! { <li>{s.instruction.clone()}</li> }).collect_view()}</ol>
                        <p><strong>"If the readings are off: "</strong>{bench.troubleshooting.join(" ")}</p>
                    </div>
                    <p class="sheet-notes">{move || with_shown(&|r| r.notes.clone())}</p>
                }.into_any()
                }
            })}
        </article>
    }
}
