//! Results of the open design: VT+, VT− and the hysteresis with their windows (field and bench
//! windows from core's tolerance study, the spec window the user set), the other levels, warnings and the transfer
//! curve. These stay in view beside the inputs (wide screens) or above them (narrow screens).

use super::state::Notebook;
use crate::plot;
use hysteron_core::analysis::{Analysis, Thresholds};
use hysteron_core::overview::{key_line, quick, Quick};
use hysteron_core::jobs::{Job, JobOutput};
use hysteron_core::tolerance::bench_window::Windows;
use hysteron_core::tolerance::{worst_case::WorstCase, SpecWindow};
use hysteron_core::topology::TransferCurve;
use leptos::html::Canvas;
use leptos::prelude::*;

/// A non-breaking space: a number and its unit never part at a line end.
const NBSP: &str = "\u{a0}";

fn volts(v: f64) -> String {
    format!("{v:.4}{NBSP}V")
}

fn window_text(lo: Option<f64>, hi: Option<f64>) -> Option<String> {
    match (lo, hi) {
        (Some(a), Some(b)) => Some(format!("{a:.3}{NBSP}…{NBSP}{b:.3}{NBSP}V")),
        (Some(a), None) => Some(format!("≥{NBSP}{a:.3}{NBSP}V")),
        (None, Some(b)) => Some(format!("≤{NBSP}{b:.3}{NBSP}V")),
        (None, None) => None,
    }
}

/// The figures computed once per keystroke (`core::overview::quick`), shared by the results and
/// the narrow screen's key strip.
#[derive(Clone, Copy)]
pub struct Figures {
    quick: Memo<Option<Quick>>,
    analysis: Memo<Result<Analysis, String>>,
    /// VT+ and VT− at the field terminal when the design has an input network (core's
    /// `Quick::field_terminal`); `None` without one.
    terminal: Memo<Option<Result<Thresholds, String>>>,
}

impl Figures {
    /// Starts following the open design.
    pub fn new(nb: Notebook) -> Self {
        let quick = Memo::new(move |_| nb.with_current(quick));
        let analysis = Memo::new(move |_| {
            quick.with(|q| match q {
                Some(q) => q.analysis.clone().map_err(|e| e.to_string()),
                None => Err("no design open".into()),
            })
        });
        let terminal = Memo::new(move |_| {
            quick.with(|q| q.as_ref().and_then(|q| q.field_terminal.clone()).map(|t| t.map_err(|e| e.to_string())))
        });
        Self { quick, analysis, terminal }
    }
}

/// One line of VT+, VT− and the hysteresis, shown at the top of narrow screens while the inputs
/// scroll beneath it (the full results stand above the inputs there).
#[component]
pub fn KeyStrip(figures: Figures) -> impl IntoView {
    let text = move || {
        let terminal = figures.terminal.get();
        figures.analysis.with(|a| match (a, terminal) {
            (Ok(a), t) => key_line(
                a.vt_upper_v,
                a.vt_lower_v,
                a.hysteresis_v,
                t.and_then(Result::ok).map(|t| (t.vt_upper_v, t.vt_lower_v)),
            ),
            (Err(_), _) => "No thresholds: see the message under Results".into(),
        })
    };
    view! {
        <div class="key-strip" id="key-strip" aria-hidden="true">{text}</div>
    }
}

/// Shows VT+, VT−, hysteresis (with their windows), centre, output levels, warnings and the
/// transfer curve; errors appear in place of results.
#[component]
pub fn Results(figures: Figures) -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let analysis = figures.analysis;
    let terminal = figures.terminal;
    let has_network = Memo::new(move |_| terminal.with(|t| t.is_some()));
    let curve = Memo::new(move |_| figures.quick.with(|q| q.as_ref().and_then(|q| q.curve.clone())));
    // The field window (every tolerance over its full range) and the bench window (parts and
    // device spread at 25 °C and the nominal supply), computed on a compute worker once typing
    // pauses (`core::jobs::Job::Windows`, equal to `overview::record_windows`). The job carries
    // only what the windows read, so an edit elsewhere (name, notes, signal, Monte Carlo trials)
    // starts nothing.
    let windows_job = Memo::new(move |_| {
        nb.with_settled(|r| {
            let mut only = hysteron_core::record::DesignRecord::new("", r.circuit.clone());
            only.checks = r.checks;
            only.tolerance = r.tolerance.as_ref().map(|t| t.without_monte_carlo());
            Job::Windows { record: Box::new(only) }
        })
    });
    // The job runs from the piece of the page built just after the first paint ([`WindowsFollower`]),
    // so the code that talks to the compute workers is not in the page's first module.
    let windows = RwSignal::new(None::<Windows>);
    provide_context(WindowsLink { job: windows_job, windows });
    let spec = Memo::new(move |_| nb.with_current(|r| r.tolerance.as_ref().map(|t| t.spec)).flatten().unwrap_or_default());
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
    let hover = RwSignal::new(String::new());
    // Each edit redraws at once; the first drawing, when a design opens, waits until the page
    // has painted the rest of the design (drawn at once, its first text forced a layout of the
    // whole new design: 12 ms of the task that opened it, in a CPU profile).
    Effect::new(move |drawn_before: Option<()>| {
        let c: Option<TransferCurve> = curve.get();
        let el = canvas.get();
        if drawn_before.is_none() {
            crate::tick::after_paint(100, move || {
                if let (Some(Some(el)), Some(Some(c))) = (canvas.try_get_untracked(), curve.try_get_untracked()) {
                    plot_error.try_set(plot::draw_transfer(&el, &c).err());
                }
            });
        } else if let (Some(el), Some(c)) = (el, c) {
            plot_error.set(plot::draw_transfer(&el, &c).err());
        }
    });
    let on_move = move |ev: leptos::ev::MouseEvent| {
        let v = canvas.get_untracked().and_then(|c| plot::current_frame(&c)).and_then(|f| f.value_at(ev.offset_x() as f64, ev.offset_y() as f64));
        hover.set(v.map(|(x, y)| format!("input {x:.3} V, output {y:.3} V")).unwrap_or_default());
    };
    let value = move |f: fn(&Analysis) -> f64| move || analysis.with(|a| a.as_ref().map(f).ok());
    // One key figure: its name, what it means, the value, and its windows where there are any.
    type Window = fn(&SpecWindow) -> (Option<f64>, Option<f64>);
    type Bench = fn(&WorstCase) -> (f64, f64);
    let key = move |id: &'static str, name: &'static str, note: &'static str, f: fn(&Analysis) -> f64, at_terminal: fn(&Thresholds) -> f64, spec_of: Window, bench_of: Bench| {
        let v = value(f);
        // With an input network the figure at the field terminal leads (`#{id}-terminal`); the
        // pin's figure (`#{id}`, as without a network) follows it, smaller.
        let t = move || terminal.with(|t| t.as_ref().and_then(|t| t.as_ref().ok()).map(at_terminal));
        let terminal_error = move || terminal.with(|t| t.as_ref().and_then(|t| t.as_ref().err()).is_some());
        let spec_text = move || spec.with(|s| {
            let (lo, hi) = spec_of(s);
            window_text(lo, hi)
        });
        let outside = move || {
            let (lo, hi) = spec.with(spec_of);
            v().is_some_and(|x| lo.is_some_and(|l| x < l) || hi.is_some_and(|h| x > h))
        };
        let field_range = move || windows.with(|w| w.as_ref().map(|w| bench_of(&w.field)));
        let bench_range = move || windows.with(|w| w.as_ref().and_then(|w| w.bench.first()).map(|b| bench_of(&b.worst_case)));
        view! {
            <div class="key-figure" id=format!("key-{id}") class:with-network=move || has_network.get()>
                <span class="key-name">{name}</span>
                <span class="key-note">{note}</span>
                {move || has_network.get().then(|| view! {
                    <span class="key-where">"at the field terminal"</span>
                    <output id=format!("{id}-terminal") class="key-value" data-value=move || t().map(|x| x.to_string()).unwrap_or_default()
                        title=move || if terminal_error() { "the input network cannot be analysed: see Input network" } else { "" }>
                        {move || t().map(volts).unwrap_or_else(|| "—".into())}
                    </output>
                    <span class="key-where">"at the trigger's input pin"</span>
                })}
                <output id=id class="key-value" class:key-pin=move || has_network.get() data-value=move || v().map(|x| x.to_string()).unwrap_or_default()>
                    {move || v().map(volts).unwrap_or_else(|| "—".into())}
                </output>
                {move || field_range().map(|(lo, hi)| view! {
                    <span class="key-window" id=format!("{id}-field") data-min=lo.to_string() data-max=hi.to_string()>
                        "field " {window_text(Some(lo), Some(hi))}
                    </span>
                })}
                {move || bench_range().map(|(lo, hi)| view! {
                    <span class="key-window" id=format!("{id}-bench") data-min=lo.to_string() data-max=hi.to_string()>
                        "bench " {window_text(Some(lo), Some(hi))}
                    </span>
                })}
                {move || spec_text().map(|t| view! {
                    <span class="key-window" class:outside=outside id=format!("{id}-spec")>"spec " {t}</span>
                })}
            </div>
        }
    };
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
        <section class="card results-card" aria-labelledby="results-heading" id="results">
            <h2 id="results-heading">"Results"</h2>
            <super::Deferred load=super::Later::WindowsJob />
            {move || analysis.with(|a| a.as_ref().err().cloned()).map(|e| view! { <p class="error" id="analysis-error" role="alert">{e}</p> })}
            {move || differs().map(|m| view! { <p class="compare" id="saved-differs" role="status">{m}</p> })}
            <div class="key-figures" id="key-figures">
                {key("vt-upper", "VT+", "trip point, rising input", |a| a.vt_upper_v, |t| t.vt_upper_v,
                    |s| (s.vt_upper_min_v, s.vt_upper_max_v), |w| (w.vt_upper.min.value_v, w.vt_upper.max.value_v))}
                {key("vt-lower", "VT−", "release point, falling input", |a| a.vt_lower_v, |t| t.vt_lower_v,
                    |s| (s.vt_lower_min_v, s.vt_lower_max_v), |w| (w.vt_lower.min.value_v, w.vt_lower.max.value_v))}
                {key("hysteresis", "Hysteresis", "VT+ − VT−", |a| a.hysteresis_v, |t| t.hysteresis_v(),
                    |s| (s.hysteresis_min_v, s.hysteresis_max_v), |w| (w.hysteresis.min.value_v, w.hysteresis.max.value_v))}
            </div>
            {move || has_network.get().then(|| view! {
                <p class="key-legend note" id="key-terminal-legend">"With the input network: the large figures are at the field terminal, on the wire in front of the network (what you measure there); the smaller ones at the trigger's input pin. The windows below them, and the transfer curve, are the pin's."</p>
            })}
            {move || terminal.with(|t| t.as_ref().and_then(|t| t.as_ref().err().cloned())).map(|e| view! {
                <p class="error" id="terminal-error" role="alert">{format!("No thresholds at the field terminal: {e}")}</p>
            })}
            <p class="key-legend note">"Field: every tolerance over its full range (supply, temperature, parts, device). Bench: parts and device spread only, at 25 °C and the nominal supply — what the bench procedure accepts. Spec: your window (under Tolerance)."</p>
            <figure class="plot">
                <canvas id="transfer-plot" node_ref=canvas
                    on:mousemove=on_move on:mouseleave=move |_| hover.set(String::new())
                    role="img" aria-label="Transfer curve: output voltage against input voltage, both branches of the hysteresis loop"></canvas>
                <output class="hover" id="transfer-hover" aria-live="off">{move || hover.get()}</output>
                <figcaption>"Transfer curve: output against input. Arrows show which way the input moves; the rising input switches at VT+, the falling input at VT−."</figcaption>
                {move || plot_error.get().map(|e| view! { <p class="error">{e}</p> })}
            </figure>
            <table class="results levels">
                <tbody>
                    {row("centre", "Centre", |a| a.centre_v)}
                    {row("output-high", "Output high", |a| a.output_high_v)}
                    {row("output-low", "Output low", |a| a.output_low_v)}
                </tbody>
            </table>
            <ul class="warnings">
                {move || analysis.with(|a| a.as_ref().map(|a| a.warnings.clone()).unwrap_or_default())
                    .into_iter().map(|w| view! { <li class="warning">{w.message}</li> }).collect_view()}
            </ul>
        </section>
    }
}

/// What [`Results`] hands the piece that runs its windows job: the job (a new one each time the
/// settled design changes what the windows read) and where the answer goes.
#[derive(Clone, Copy)]
struct WindowsLink {
    job: Memo<Option<Job>>,
    windows: RwSignal<Option<Windows>>,
}

/// Runs the results' windows job on the compute workers (`core::jobs::Job::Windows`, equal to
/// `overview::record_windows`) and puts each answer where [`Results`] shows it; draws nothing.
/// Built after the first paint, from the piece with the other later sections (`view::Later::WindowsJob`).
#[component]
pub fn WindowsFollower() -> impl IntoView {
    let link = expect_context::<WindowsLink>();
    let run = crate::jobs::follow(link.job, hysteron_core::job_answers::Answers::WINDOWS);
    Effect::new(move |_| {
        let w = run.result.with(|o| match o {
            Some(Ok(JobOutput::Windows(w))) => Some((**w).clone()),
            _ => None,
        });
        // Only a different answer redraws the figures' windows (as a memo would).
        if link.windows.with_untracked(|old| old != &w) {
            link.windows.set(w);
        }
    });
}
