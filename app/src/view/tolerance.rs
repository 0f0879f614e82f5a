//! Tolerance: worst case, GUM and the error budget live as the design changes; Monte Carlo on
//! request, on the compute workers (`crate::jobs`) with a progress bar and a cancel button, with histograms and the yield
//! against the spec window. All numbers come from `core::tolerance`.
//!
//! The Monte Carlo result is kept with the design (`Notebook::keep_study`), so it survives a
//! reload and edits elsewhere; an edit to the circuit or the tolerance settings marks it out of
//! date instead of removing it.

use super::state::{study_inputs, Notebook, Study};
use crate::storage::Kept;
use crate::fields::{OptionalQuantityField, QuantityField};
use crate::plot;
use hysteron_core::tolerance::input_standard::{check_input_types_with_current, InputType};
use hysteron_core::error::DesignError;
use hysteron_core::tolerance::settings::MAX_TRIALS;
use hysteron_core::tolerance::{error_budget, gum, Distribution, SpecWindow, ToleranceSettings};
use leptos::html::Canvas;
use leptos::prelude::*;

#[derive(Clone, Copy)]
struct McState {
    /// The running job (Monte Carlo on the compute workers, see `crate::jobs`).
    job: StoredValue<Option<crate::jobs::JobHandle>, leptos::prelude::LocalStorage>,
    progress: RwSignal<Option<crate::jobs::JobStatus>>,
    error: RwSignal<Option<String>>,
}

fn stop(st: McState) {
    if let Some(h) = st.job.try_update_value(|j| j.take()).flatten() {
        h.cancel();
    }
    st.progress.set(None);
}

fn mv(v: f64) -> String {
    format!("{:.2} mV", v * 1e3)
}

fn volts(v: f64) -> String {
    format!("{v:.4} V")
}

/// The tolerance section.
#[component]
pub fn ToleranceSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let settings = Memo::new(move |_| nb.with_current(|r| r.tolerance.clone().unwrap_or_default()).unwrap_or_default());
    let edit = move |key: &'static str, f: Box<dyn Fn(&mut ToleranceSettings)>| {
        nb.edit_keyed(key, move |r| {
            let mut s = r.tolerance.clone().unwrap_or_default();
            f(&mut s);
            r.tolerance = Some(s);
        })
    };
    // The worst case runs on a compute worker once typing pauses (`core::jobs::Job::WorstCase`,
    // sliced by corners: progress and Cancel for a long one); GUM and the budget stay here. The job
    // leaves out the Monte Carlo settings it does not read, so typing a trial count starts nothing.
    let wc_job = Memo::new(move |_| {
        nb.with_settled(|r| hysteron_core::jobs::Job::WorstCase {
            circuit: r.circuit.clone(),
            settings: r.tolerance.clone().unwrap_or_default().without_monte_carlo(),
        })
    });
    let wc_run = crate::jobs::follow(wc_job, hysteron_core::job_answers::Answers::WORST_CASE);
    let quick = Memo::new(move |_| {
        if wc_job.with(|j| j.is_none()) {
            return Err("no design open".into());
        }
        let wc = match wc_run.result.get() {
            None => return Ok(None),
            Some(Err(e)) => return Err(e),
            Some(Ok(hysteron_core::jobs::JobOutput::WorstCase(wc))) => wc,
            Some(Ok(_)) => return Err("the worker returned another study's result".into()),
        };
        nb.with_settled(|r| {
            let s = r.tolerance.clone().unwrap_or_default();
            let g = gum(&r.circuit, &s).map_err(|e| e.to_string())?;
            let b = error_budget(&r.circuit, &s).map_err(|e| e.to_string())?;
            let types = check_input_types_with_current(&r.circuit, wc.vt_upper.max.value_v, wc.vt_lower.min.value_v)
                .map_err(|e| e.to_string())?;
            Ok::<_, String>(Some((wc, g, b, types)))
        })
        .unwrap_or_else(|| Err("no design open".into()))
    });
    let st = McState {
        job: StoredValue::new_local(None),
        progress: RwSignal::new(None),
        error: RwSignal::new(None),
    };
    // The run kept with the open design, and whether the design still gives its inputs.
    let kept = Memo::new(move |_| nb.study(Study::MonteCarlo, |s| &s.monte_carlo));
    let start = move |_| {
        let Some(id) = nb.current.get_untracked() else { return };
        let Some((circuit, inputs)) = nb.with_current_untracked(|r| (r.circuit.clone(), study_inputs(Study::MonteCarlo, r))) else { return };
        stop(st);
        st.error.set(None);
        let job = hysteron_core::jobs::Job::MonteCarlo { circuit, settings: settings.get_untracked(), trials: None };
        let t0 = crate::tick::now_ms();
        // The result is kept with the design the run started on, even if another one is open now.
        let handle = crate::jobs::start(
            job,
            hysteron_core::job_answers::Answers::MONTE_CARLO,
            move |status| st.progress.set(Some(status)),
            move |out| {
                let elapsed_ms = crate::tick::now_ms() - t0;
                st.job.set_value(None);
                st.progress.set(None);
                match out {
                    Ok(hysteron_core::jobs::JobOutput::MonteCarlo(result)) => {
                        nb.keep_study(&id, move |s| s.monte_carlo = Some(Kept { inputs, result: crate::unread::Unread::new(result), elapsed_ms }))
                    }
                    Ok(_) => st.error.set(Some("the worker returned another study's result".into())),
                    Err(e) => st.error.set(Some(e)),
                }
            },
        );
        if !handle.is_finished() {
            st.job.set_value(Some(handle));
        }
    };
    let cancel = Callback::new(move |_| stop(st));
    // A settings field refuses a value that makes the settings invalid, with core's reason, when the
    // reason is about one of `own` (the record names of what this field edits).
    let settings_check = move |own: &'static [&'static str], put: fn(&mut ToleranceSettings, f64)| {
        Callback::new(move |v: f64| -> Option<String> {
            let mut candidate = settings.get_untracked();
            put(&mut candidate, v);
            candidate.validate().err().and_then(|e| match &e {
                DesignError::InvalidValue { field, reason } if own.iter().any(|k| field.ends_with(k)) => Some(reason.clone()),
                _ => None,
            })
        })
    };
    let setting = move |id: &'static str, label: &'static str, unit: &'static str, own: &'static [&'static str],
                        get: fn(&ToleranceSettings) -> f64, put: fn(&mut ToleranceSettings, f64)| {
        let value = Signal::derive(move || get(&settings.get()));
        view! { <QuantityField id=id.to_string() label=label.to_string() unit value check=settings_check(own, put)
            on_value=Callback::new(move |v| edit(id, Box::new(move |s| put(s, v)))) /> }
    };
    let pct = move |id: &'static str, label: &'static str, own: &'static [&'static str], get: fn(&ToleranceSettings) -> f64, put: fn(&mut ToleranceSettings, f64)| {
        setting(id, label, "%", own, get, put)
    };
    // A spec bound is refused when it would cross its partner ("VT+ at least" above "VT+ at most").
    let spec = move |id: &'static str, label: &'static str, partner: &'static str, is_min: bool,
                     get: fn(&SpecWindow) -> Option<f64>, put: fn(&mut SpecWindow, Option<f64>), other: fn(&SpecWindow) -> Option<f64>| {
        let value = Signal::derive(move || get(&settings.get().spec));
        let check = Callback::new(move |v: f64| -> Option<String> {
            let o = other(&settings.get_untracked().spec)?;
            let crossed = if is_min { v > o } else { v < o };
            crossed.then(|| format!("must not be {} {partner} ({})", if is_min { "above" } else { "below" }, volts(o)))
        });
        view! { <OptionalQuantityField id=id.to_string() label=label.to_string() unit="V" value check
            on_value=Callback::new(move |v| edit(id, Box::new(move |s| put(&mut s.spec, v)))) /> }
    };
    let hist_canvases: [NodeRef<Canvas>; 3] = [NodeRef::new(), NodeRef::new(), NodeRef::new()];
    Effect::new(move |_| {
        let s = settings.get();
        kept.with(|r| {
            if let Some(mc) = r.as_ref().map(|k| &k.result) {
                let sets = [
                    (&mc.vt_upper.histogram, "VT+ (V)", s.spec.vt_upper_min_v, s.spec.vt_upper_max_v),
                    (&mc.vt_lower.histogram, "VT− (V)", s.spec.vt_lower_min_v, s.spec.vt_lower_max_v),
                    (&mc.hysteresis.histogram, "hysteresis (V)", s.spec.hysteresis_min_v, s.spec.hysteresis_max_v),
                ];
                for (node, (h, label, lo, hi)) in hist_canvases.iter().zip(sets) {
                    if let Some(c) = node.get() {
                        let _ = plot::draw_histogram(&c, h, label, lo, hi).map(|_| ());
                    }
                }
            }
        })
    });
    view! {
        <section class="card" aria-labelledby="tolerance-heading" id="tolerance">
            <h2 id="tolerance-heading">"Tolerance"</h2>
            <div class="field-grid">
                <div class="field">
                    <label for="tol-distribution">"Distribution of every part"</label>
                    <select id="tol-distribution"
                        prop:value=move || if settings.get().distribution == Distribution::Uniform { "uniform" } else { "normal" }
                        on:change=move |ev| { let n = event_target_value(&ev) == "normal";
                            edit("tol-distribution", Box::new(move |s| s.distribution = if n { Distribution::Normal } else { Distribution::Uniform })) }>
                        <option value="uniform">"uniform within the tolerance"</option>
                        <option value="normal">"normal, tolerance at 3 σ"</option>
                    </select>
                </div>
                {pct("tol-resistor", "Resistor tolerance", &["resistor_tolerance_pct"], |s| s.resistor_tolerance_pct, |s, v| s.resistor_tolerance_pct = v)}
                {pct("tol-supply", "Supply tolerance", &["supply_tolerance_pct"], |s| s.supply_tolerance_pct, |s, v| s.supply_tolerance_pct = v)}
                {pct("tol-reference", "Reference tolerance", &["reference_tolerance_pct"], |s| s.reference_tolerance_pct, |s, v| s.reference_tolerance_pct = v)}
                {pct("tol-threshold", "Gate/transistor threshold tolerance", &["device_threshold_tolerance_pct"], |s| s.device_threshold_tolerance_pct, |s, v| s.device_threshold_tolerance_pct = v)}
                {setting("tol-tempco", "Resistor tempco", "ppm/K", &["resistor_tempco_ppm_per_k"], |s| s.resistor_tempco_ppm_per_k, |s, v| s.resistor_tempco_ppm_per_k = v)}
                {setting("tol-temp-min", "Temperature from", "°C", &["temperature_min_c", "temperature_max_c"], |s| s.temperature_min_c, |s, v| s.temperature_min_c = v)}
                {setting("tol-temp-max", "Temperature to", "°C", &["temperature_min_c", "temperature_max_c"], |s| s.temperature_max_c, |s, v| s.temperature_max_c = v)}
            </div>
            <fieldset class="plain">
                <legend>"Spec window (the yield counts boards inside it)"</legend>
                <div class="field-grid">
                    {spec("spec-vt-upper-min", "VT+ at least", "VT+ at most", true, |w| w.vt_upper_min_v, |w, v| w.vt_upper_min_v = v, |w| w.vt_upper_max_v)}
                    {spec("spec-vt-upper-max", "VT+ at most", "VT+ at least", false, |w| w.vt_upper_max_v, |w, v| w.vt_upper_max_v = v, |w| w.vt_upper_min_v)}
                    {spec("spec-vt-lower-min", "VT− at least", "VT− at most", true, |w| w.vt_lower_min_v, |w, v| w.vt_lower_min_v = v, |w| w.vt_lower_max_v)}
                    {spec("spec-vt-lower-max", "VT− at most", "VT− at least", false, |w| w.vt_lower_max_v, |w, v| w.vt_lower_max_v = v, |w| w.vt_lower_min_v)}
                    {spec("spec-hyst-min", "Hysteresis at least", "hysteresis at most", true, |w| w.hysteresis_min_v, |w, v| w.hysteresis_min_v = v, |w| w.hysteresis_max_v)}
                    <div class="field">
                        <label for="spec-input-type">"24 V input type (IEC 61131-2)"</label>
                        <select id="spec-input-type"
                            prop:value=move || match settings.get().spec_input_type { None => "none", Some(InputType::Type1) => "type1", Some(InputType::Type2) => "type2", Some(InputType::Type3) => "type3" }
                            on:change=move |ev| { let v = event_target_value(&ev);
                                let t = match v.as_str() { "type1" => Some(InputType::Type1), "type2" => Some(InputType::Type2), "type3" => Some(InputType::Type3), _ => None };
                                edit("spec-input-type", Box::new(move |s| { s.spec_input_type = t; s.check_input_types = t.is_some(); })) }>
                            <option value="none">"not a 24 V input"</option>
                            <option value="type1">"Type 1"</option>
                            <option value="type2">"Type 2"</option>
                            <option value="type3">"Type 3"</option>
                        </select>
                    </div>
                </div>
            </fieldset>
            {move || match quick.get() {
                Err(e) => view! { <p class="error" id="tolerance-error" role="alert">{e}</p> }.into_any(),
                Ok(None) => view! {
                    <p class="note" id="wc-running">"Worst case: computing…"
                        <super::progress::JobProgress id="wc" status=wc_run.status.into() on_cancel=wc_run.cancel /></p>
                }.into_any(),
                Ok(Some((wc, g, b, types))) => {
                    let rows = [
                        ("VT+", &wc.vt_upper, &g.vt_upper, "wc-vt-upper"),
                        ("VT−", &wc.vt_lower, &g.vt_lower, "wc-vt-lower"),
                        ("Hysteresis", &wc.hysteresis, &g.hysteresis, "wc-hysteresis"),
                    ];
                    let show_types = settings.get().check_input_types;
                    view! {
                        <table class="grid" id="worst-case">
                            <thead><tr><th></th><th>"worst-case min"</th><th>"worst-case max"</th><th>"GUM u"</th><th>"GUM U (k\u{a0}=\u{a0}2)"</th></tr></thead>
                            <tbody>
                                {rows.into_iter().map(|(name, e, gf, id)| view! {
                                    <tr id=id>
                                        <td>{name}</td>
                                        <td class="wc-min" data-value=e.min.value_v.to_string()>{volts(e.min.value_v)}</td>
                                        <td class="wc-max" data-value=e.max.value_v.to_string()>{volts(e.max.value_v)}</td>
                                        <td>{mv(gf.combined_standard_uncertainty_v)}</td>
                                        <td>{mv(gf.expanded_uncertainty_v)}</td>
                                    </tr>
                                }).collect_view()}
                            </tbody>
                        </table>
                        <p class="note">{format!("Worst case by {} over {} varied quantities ({} evaluations).",
                            match wc.method { hysteron_core::tolerance::worst_case::WorstCaseMethod::Corners => "every corner", _ => "the sensitivity-sign method" },
                            wc.varied_parameters, wc.evaluations)}</p>
                        <details open>
                            <summary>"Error budget of VT+ and VT− (largest first)"</summary>
                            <div class="row">
                                {[("VT+", b.vt_upper.clone()), ("VT−", b.vt_lower.clone())].into_iter().map(|(name, fb)| view! {
                                    <table class="grid budget">
                                        <thead><tr><th>{name}</th><th>"± limit"</th><th>"u"</th></tr></thead>
                                        <tbody>
                                            {fb.entries.iter().filter(|e| e.limit_mv.abs() > 1e-6).map(|e| view! {
                                                <tr><td>{e.label.clone()}</td><td>{format!("{:.2} mV", e.limit_mv)}</td><td>{format!("{:.2} mV", e.standard_mv)}</td></tr>
                                            }).collect_view()}
                                            <tr><td>"linear sum"</td><td>{format!("{:.2} mV", fb.linear_sum_mv)}</td><td></td></tr>
                                            <tr><td>"root-sum-square"</td><td>{format!("{:.2} mV", fb.rss_mv)}</td><td>{format!("{:.2} mV", fb.combined_standard_mv)}</td></tr>
                                        </tbody>
                                    </table>
                                }).collect_view()}
                            </div>
                        </details>
                        {show_types.then(|| view! {
                            <ul id="input-type-checks">
                                {types.into_iter().map(|t| view! {
                                    <li class:warning=!t.conforms>{format!("{:?}: worst-case VT+ max {:.2} V vs ON from {:.1} V, VT− min {:.2} V vs OFF up to {:.1} V — {}",
                                        t.limits.input_type, t.vt_upper_max_v, t.limits.on_min_v, t.vt_lower_min_v, t.limits.off_max_v,
                                        if t.conforms { "conforms".to_string() } else { format!("does not conform: {}", t.failures.join("; ")) })}</li>
                                }).collect_view()}
                                <li class="note">{hysteron_core::tolerance::input_standard::STANDARD}</li>
                            </ul>
                        })}
                    }.into_any()
                }
            }}
            <div class="row">
                <QuantityField id="mc-trials".to_string() label="Monte Carlo trials".to_string() unit=""
                    value=Signal::derive(move || settings.get().monte_carlo.trials as f64)
                    check=Callback::new(|v: f64| crate::fields::whole_number(v, 2.0, MAX_TRIALS as f64))
                    on_value=Callback::new(move |v: f64| edit("mc-trials", Box::new(move |s| s.monte_carlo.trials = v as u64))) />
                <QuantityField id="mc-seed".to_string() label="Seed".to_string() unit=""
                    value=Signal::derive(move || settings.get().monte_carlo.seed as f64)
                    check=Callback::new(|v: f64| crate::fields::whole_number(v, 0.0, 9.0e15))
                    on_value=Callback::new(move |v: f64| edit("mc-seed", Box::new(move |s| s.monte_carlo.seed = v as u64))) />
                <button id="mc-run" on:click=start disabled=move || st.progress.get().is_some()>"Run Monte Carlo"</button>
                <super::progress::JobProgress id="mc" status=st.progress.into() on_cancel=cancel />
            </div>
            {move || st.error.get().map(|e| view! { <p class="error" id="mc-error" role="alert">{e}</p> })}
            {move || kept.get().map(|k| {
                let (mc, elapsed_ms, current) = (k.result, k.elapsed_ms, k.current);
                {
                    let y = mc.spec_yield.clone();
                    view! {
                        {(!current).then(|| view! {
                            <p class="stale" id="mc-stale" role="status"><strong>"Out of date — run again."</strong>
                                " The circuit or the tolerance settings changed since this run; the figures below are from the design as it was."</p>
                        })}
                        {(mc.normal_sampler != hysteron_core::rng::NORMAL_SAMPLER).then(|| view! {
                            <p class="note" id="mc-sampler" role="status">"This run was drawn by an earlier version of Hysteron's random-number method: running it again with the same seed draws other boards, so the figures may differ a little."</p>
                        })}
                        <div class="mc-result" class:out-of-date=!current>
                        <p id="mc-summary" data-current=current.to_string()>{format!("{} trials ({} rejected) in {:.0} ms. VT+ {:.4} ± {:.4} V, VT− {:.4} ± {:.4} V (mean ± standard deviation); 95 % of boards: VT+ {:.4}…{:.4} V, VT− {:.4}…{:.4} V.",
                            mc.trials, mc.rejected_trials, elapsed_ms, mc.vt_upper.mean_v, mc.vt_upper.standard_deviation_v, mc.vt_lower.mean_v, mc.vt_lower.standard_deviation_v,
                            mc.vt_upper.interval_95_low_v, mc.vt_upper.interval_95_high_v, mc.vt_lower.interval_95_low_v, mc.vt_lower.interval_95_high_v)}</p>
                        {match y {
                            Some(y) => view! { <p class="yield">"Yield against the spec window: "
                                <output id="mc-yield" data-value=y.fraction.to_string()>{format!("{:.2} % (± {:.2} %)", y.fraction * 100.0, y.standard_error * 100.0)}</output></p> }.into_any(),
                            None => view! { <p class="note" id="mc-no-spec">"Enter a spec window to get the yield."</p> }.into_any(),
                        }}
                        </div>
                    }.into_any()
                }
            })}
            <div class="histograms" class:hidden=move || kept.with(|r| r.is_none())>
                <canvas class="hist" id="hist-vt-upper" node_ref=hist_canvases[0] role="img" aria-label="Histogram of VT+ over the Monte Carlo trials"></canvas>
                <canvas class="hist" id="hist-vt-lower" node_ref=hist_canvases[1] role="img" aria-label="Histogram of VT− over the Monte Carlo trials"></canvas>
                <canvas class="hist" id="hist-hysteresis" node_ref=hist_canvases[2] role="img" aria-label="Histogram of the hysteresis over the Monte Carlo trials"></canvas>
            </div>
        </section>
    }
}
