//! Signal test: build a signal (components and noise) or import a captured one (CSV), run the
//! design and the no-hysteresis baseline over it, count false edges, sweep the noise, and look at
//! the waveforms with zoom and pan. All simulation is `core::signal`'s.

use super::state::{study_inputs, Notebook, Study};
use crate::storage::Kept;
use crate::fields::QuantityField;
use crate::plot::{self, colours, Trace};
use hysteron_core::signal::csv::{Capture, CsvOptions};
use hysteron_core::signal::generate::{Component, SignalDefinition};
use hysteron_core::signal::noise::NoiseSource;
use hysteron_core::signal::plot::{downsample_min_max, Envelope};
use hysteron_core::jobs::{Job, JobOutput, DEFAULT_DISPLAY_POINTS};
use hysteron_core::signal::report::{SignalRun, SignalSettings, SignalSource};
use hysteron_core::signal::sweep::SweepSettings;
use leptos::html::Canvas;
use leptos::prelude::*;
use wasm_bindgen::JsCast;

/// One numeric field of a signal part: record key, label on screen, unit.
type PartField = (&'static str, &'static str, &'static str);

/// The numeric fields of a signal part, in the order they are shown, with their labels and units.
fn part_fields(kind: &str) -> &'static [PartField] {
    match kind {
        "dc" => &[("level_v", "Level", "V")],
        "sine" | "triangle" => &[("amplitude_v", "Amplitude (peak)", "V"), ("frequency_hz", "Frequency", "Hz"), ("phase_deg", "Phase", "°")],
        "square" => &[
            ("amplitude_v", "Amplitude (peak)", "V"),
            ("frequency_hz", "Frequency", "Hz"),
            ("phase_deg", "Phase", "°"),
            ("duty", "Duty cycle (0 to 1)", ""),
            ("rise_time_s", "Edge time", "s"),
        ],
        "ramp" => &[("slope_v_per_s", "Slope", "V/s"), ("start_s", "Starts at", "s")],
        "rc_approach" => &[("step_v", "Step", "V"), ("time_constant_s", "Time constant τ", "s"), ("start_s", "Starts at", "s")],
        "drift" => &[("rate_v_per_s", "Drift rate", "V/s")],
        "white" => &[("rms_v", "RMS", "V")],
        "band_limited" => &[("rms_v", "RMS", "V"), ("corner_hz", "Corner frequency", "Hz")],
        "hum" => &[("amplitude_v", "Amplitude of the fundamental (peak)", "V"), ("phase_deg", "Phase", "°")],
        "spikes" => &[("rate_hz", "Mean rate", "Hz"), ("amplitude_v", "Height", "V"), ("decay_s", "Decay time constant", "s")],
        _ => &[],
    }
}

/// A choice of a signal part (record key, label, the options as record value and words).
type PartChoice = (&'static str, &'static str, &'static [(&'static str, &'static str)]);

/// The choices of a signal part (enumerations in the record), shown as drop-down lists.
fn part_choices(kind: &str) -> &'static [PartChoice] {
    match kind {
        "hum" => &[("mains", "Mains frequency", &[("hz50", "50 Hz"), ("hz60", "60 Hz")])],
        "spikes" => &[("polarity", "Polarity", &[("random", "either sign"), ("positive", "positive"), ("negative", "negative")])],
        "band_limited" => &[("poles", "Low-pass stages", &[("1", "1 (RC)"), ("2", "2"), ("3", "3"), ("4", "4")])],
        _ => &[],
    }
}

/// The words on screen for a signal part's kind.
fn kind_title(kind: &str) -> &'static str {
    match kind {
        "dc" => "DC level",
        "sine" => "Sine",
        "triangle" => "Triangle",
        "square" => "Square wave",
        "ramp" => "Ramp",
        "rc_approach" => "RC approach",
        "drift" => "Drift",
        "white" => "White noise",
        "band_limited" => "Band-limited noise",
        "hum" => "Mains hum",
        "spikes" => "Spikes",
        _ => "Part",
    }
}

/// Writes `value` at `key` of item `i` and reads the list back as `T`s.
fn with_value<T: serde::de::DeserializeOwned>(all: &[serde_json::Value], i: usize, key: &str, value: serde_json::Value) -> Option<(Vec<serde_json::Value>, Vec<T>)> {
    let mut all = all.to_vec();
    all.get_mut(i)?.as_object_mut()?.insert(key.to_string(), value);
    let typed = serde_json::from_value::<Vec<T>>(serde_json::Value::Array(all.clone())).ok()?;
    Some((all, typed))
}

/// Edits a list of signal parts (components or noise sources): each part's numbers as fields with
/// their units, its choices as drop-down lists. The list is drawn again only when parts are added
/// or removed (its kinds change), never while a value is typed, so a field keeps its focus and text.
/// `validate` checks one part at the present sample rate; a value that makes the part invalid is
/// refused at its field with core's reason.
fn list_editor<T>(
    prefix: &'static str,
    items: Signal<Vec<serde_json::Value>>,
    write: Callback<Vec<serde_json::Value>>,
    sample_rate_hz: Signal<f64>,
    validate: fn(&T, f64) -> Result<(), hysteron_core::error::DesignError>,
) -> impl IntoView
where
    T: serde::de::DeserializeOwned + Send + Sync + 'static,
{
    let kinds = Memo::new(move |_| {
        items.with(|v| v.iter().map(|o| o.get("kind").and_then(|k| k.as_str()).unwrap_or("?").to_string()).collect::<Vec<_>>())
    });
    view! {
        <ul class="signal-list">
            {move || kinds.get().into_iter().enumerate().map(|(i, kind)| {
                let fields = part_fields(&kind).iter().map(|&(key, label, unit)| {
                    let value = Signal::derive(move || items.with(|v| v.get(i).and_then(|o| o.get(key)).and_then(|x| x.as_f64())).unwrap_or(f64::NAN));
                    let on_value = Callback::new(move |v: f64| {
                        if let Some((all, _)) = with_value::<T>(&items.get_untracked(), i, key, serde_json::json!(v)) {
                            write.run(all);
                        }
                    });
                    let check = Callback::new(move |v: f64| -> Option<String> {
                        let (_, typed) = with_value::<T>(&items.get_untracked(), i, key, serde_json::json!(v))?;
                        let part = typed.get(i)?;
                        validate(part, sample_rate_hz.get_untracked()).err().and_then(|e| {
                            let own = matches!(&e, hysteron_core::error::DesignError::InvalidValue { field, .. } if field.ends_with(key));
                            own.then(|| crate::fields::message_for(&e, key).replace("components.", "").replace("noise.", ""))
                        })
                    });
                    view! { <QuantityField id=format!("{prefix}-{i}-{key}") label=label.to_string() unit value on_value check /> }
                }).collect_view();
                let choices = part_choices(&kind).iter().map(|&(key, label, options)| {
                    let id = format!("{prefix}-{i}-{key}");
                    let current = move || items.with(|v| v.get(i).and_then(|o| o.get(key)).map(|x| match x {
                        serde_json::Value::String(s) => s.clone(),
                        other => other.to_string(),
                    })).unwrap_or_default();
                    let change = move |ev: leptos::ev::Event| {
                        let t = event_target_value(&ev);
                        let value = t.parse::<u64>().map(serde_json::Value::from).unwrap_or(serde_json::Value::String(t));
                        if let Some((all, _)) = with_value::<T>(&items.get_untracked(), i, key, value) {
                            write.run(all);
                        }
                    };
                    view! {
                        <div class="field">
                            <label for=id.clone()>{label}</label>
                            <select id=id prop:value=current on:change=change>
                                {options.iter().map(|&(v, words)| view! { <option value=v>{words}</option> }).collect_view()}
                            </select>
                        </div>
                    }
                }).collect_view();
                view! {
                    <li class="signal-item">
                        <strong>{kind_title(&kind)}</strong>
                        {fields}
                        {choices}
                        <button class="quiet small" aria-label=format!("Remove {}", kind_title(&kind)) on:click=move |_| {
                            let mut all = items.get_untracked();
                            if i < all.len() { all.remove(i); }
                            write.run(all);
                        }>"Remove"</button>
                    </li>
                }
            }).collect_view()}
        </ul>
    }
}

fn to_values<T: serde::Serialize>(v: &[T]) -> Vec<serde_json::Value> {
    v.iter().filter_map(|x| serde_json::to_value(x).ok()).collect()
}

/// The signal test section.
#[component]
pub fn SignalSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let settings = Memo::new(move |_| nb.with_current(|r| r.signal.clone()).flatten());
    let edit = move |key: &'static str, f: Box<dyn Fn(&mut SignalSettings)>| {
        nb.edit_keyed(key, move |r| {
            let mut s = r.signal.clone().unwrap_or_default();
            f(&mut s);
            r.signal = Some(s);
        })
    };
    let capture = RwSignal::new(None::<std::sync::Arc<Capture>>);
    let import_status = RwSignal::new(None::<Result<String, String>>);
    let import_progress = RwSignal::new(None::<f64>);
    let import_generation = RwSignal::new(0u64);
    let run = RwSignal::new(None::<Result<std::sync::Arc<SignalRun>, String>>);
    // False between a new run's report being shown and its waveforms being drawn (the task after):
    // the previous run's waveforms are hidden meanwhile, never shown under the new report.
    let waves_current = RwSignal::new(true);
    let has_settings = Memo::new(move |_| settings.with(|s| s.is_some()));
    let sample_rate = Signal::derive(move || settings.with(|s| s.as_ref().map(|s| s.definition.sample_rate_hz)).unwrap_or(f64::NAN));
    // A sample rate or duration is refused at its field when the signal cannot be built with it.
    let definition_check = move |key: &'static str, put: fn(&mut SignalDefinition, f64)| {
        Callback::new(move |v: f64| -> Option<String> {
            let mut d = settings.get_untracked()?.definition;
            put(&mut d, v);
            d.validate().err().and_then(|e| {
                let own = matches!(&e, hysteron_core::error::DesignError::InvalidValue { field, .. } if field == key);
                own.then(|| crate::fields::message_for(&e, key))
            })
        })
    };
    let view_window = RwSignal::new((0.0_f64, 0.0_f64));
    let progress = RwSignal::new(None::<crate::jobs::JobStatus>);
    let job = StoredValue::new_local(None::<crate::jobs::JobHandle>);
    let components = Signal::derive(move || settings.get().map(|s| to_values(&s.definition.components)).unwrap_or_default());
    let noise = Signal::derive(move || settings.get().map(|s| to_values(&s.definition.noise)).unwrap_or_default());
    let write_components = Callback::new(move |v: Vec<serde_json::Value>| {
        if let Ok(c) = serde_json::from_value::<Vec<Component>>(serde_json::Value::Array(v)) {
            edit("sig-components", Box::new(move |s| s.definition.components = c.clone()));
        }
    });
    let write_noise = Callback::new(move |v: Vec<serde_json::Value>| {
        if let Ok(n) = serde_json::from_value::<Vec<NoiseSource>>(serde_json::Value::Array(v)) {
            edit("sig-noise", Box::new(move |s| s.definition.noise = n.clone()));
        }
    });
    let add_component = move |c: Component| edit("", Box::new(move |s| s.definition.components.push(c.clone())));
    let add_noise = move |n: NoiseSource| edit("", Box::new(move |s| s.definition.noise.push(n.clone())));

    // The last run's report kept with the design (it survives a reload), and whether the design
    // still gives the inputs it was computed from.
    let kept = Memo::new(move |_| nb.study(Study::Signal, |s| &s.signal));
    let simulate = move || {
        let Some(record) = nb.with_current_untracked(|r| r.clone()) else { return };
        let Some(id) = nb.current.get_untracked() else { return };
        let inputs = study_inputs(Study::Signal, &record);
        let Some(s) = record.signal.clone() else { return };
        let imported = matches!(s.source, SignalSource::ImportedCapture { .. });
        let cap = capture.get_untracked();
        if imported && cap.is_none() {
            run.set(Some(Err("import the capture file again: captures are not stored with the design".into())));
            return;
        }
        // At the field terminal, through the input network's clamp and filter, when it has one.
        let (design, front) = match hysteron_core::input_network::from_record::signal_design(&record) {
            Ok(d) => d,
            Err(e) => return run.set(Some(Err(e.to_string()))),
        };
        // The study runs on the compute workers (`crate::jobs`), its sweep spread over them.
        if let Some(h) = job.try_update_value(|j| j.take()).flatten() {
            h.cancel();
        }
        let t0 = crate::tick::now_ms();
        let signal_job = Job::Signal {
            design,
            settings: s,
            capture: cap.as_deref().cloned(),
            display_points: DEFAULT_DISPLAY_POINTS,
            output: hysteron_core::overview::dynamics(&record).0.and_then(|r| r.ok()).map(Box::new),
            front,
        };
        let handle = crate::jobs::start(
            signal_job,
            hysteron_core::job_answers::Answers::SIGNAL,
            move |status| progress.set(Some(status)),
            move |out| {
                progress.set(None);
                job.set_value(None);
                let result = match out {
                    Ok(JobOutput::Signal(v)) => Ok(std::sync::Arc::new(*v)),
                    Ok(_) => Err("the worker returned another study's result".to_string()),
                    Err(e) => Err(e),
                };
                let r = match result {
                    Ok(r) => r,
                    Err(e) => return run.set(Some(Err(e))),
                };
                let elapsed_ms = crate::tick::now_ms() - t0;
                // The report (not the samples) is kept with the design the run started on, and
                // shown; the waveforms are drawn on a task of their own, so that storing,
                // showing and drawing a large run never make one long task.
                let report = r.report.clone();
                waves_current.set(false);
                nb.keep_study(&id, move |s| s.signal = Some(Kept { inputs, result: crate::unread::Unread::new(report), elapsed_ms }));
                crate::tick::later(move || {
                    let n = r.signal_v.len();
                    view_window.set((r.time.view().at(0), r.time.view().at(n.saturating_sub(1))));
                    run.set(Some(Ok(r)));
                    waves_current.try_set(true);
                });
            },
        );
        if !handle.is_finished() {
            job.set_value(Some(handle));
        }
    };
    let cancel = Callback::new(move |_| {
        if let Some(h) = job.try_update_value(|j| j.take()).flatten() {
            h.cancel();
        }
        progress.set(None);
    });
    let sweep = move |_| {
        edit("", Box::new(|s| if s.sweep.is_none() { s.sweep = Some(SweepSettings::default()) }));
        simulate();
    };
    // Import: the file goes to a compute worker, which reads it, with a progress bar.
    let on_file = move |ev: leptos::ev::Event| {
        let Some(input) = ev.target().and_then(|t| t.dyn_into::<web_sys::HtmlInputElement>().ok()) else { return };
        let Some(file) = input.files().and_then(|f| f.get(0)) else { return };
        let name = file.name();
        import_status.set(None);
        import_progress.set(Some(0.0));
        import_generation.update(|g| *g += 1);
        let ticket = (import_generation, import_generation.get_untracked());
        parse_slices(file.into(), name, capture, import_status, import_progress, nb, ticket);
    };
    let canvas: NodeRef<Canvas> = NodeRef::new();
    let hover = RwSignal::new(String::new());
    Effect::new(move |_| {
        let (t0, t1) = view_window.get();
        run.with(|r| {
            let (Some(Ok(r)), Some(c)) = (r.as_ref(), canvas.get()) else { return };
            let times = r.time.view();
            let buckets = 900;
            let mut input = Envelope::default();
            let mut out_d = Envelope::default();
            let mut out_b = Envelope::default();
            downsample_min_max(times, &r.signal_v, t0, t1, buckets, &mut input);
            downsample_min_max(times, &r.design_output_v, t0, t1, buckets, &mut out_d);
            downsample_min_max(times, &r.baseline_output_v, t0, t1, buckets, &mut out_b);
            let t = r.report.design.thresholds;
            // The input on its volts axis; each output in a lane of its own below it.
            let input = Trace { envelope: &input, colour: colours::INK, label: "input" };
            let outputs = [
                Trace { envelope: &out_d, colour: colours::RISING, label: "this design" },
                Trace { envelope: &out_b, colour: colours::FALLING, label: "plain comparator" },
            ];
            let marks: Vec<_> = r.baseline_edges.iter().map(|e| (e.mid_s, colours::FALLING))
                .chain(r.design_edges.iter().map(|e| (e.mid_s, colours::RISING))).collect();
            let _ = plot::draw_time(&c, t0, t1, input, &outputs, (t.vt_upper_v, t.vt_lower_v), &marks);
        });
    });
    let zoom = move |factor: f64| {
        view_window.update(|(a, b)| {
            let m = 0.5 * (*a + *b);
            let h = 0.5 * (*b - *a) * factor;
            *a = m - h;
            *b = m + h;
        })
    };
    let pan = move |frac: f64| view_window.update(|(a, b)| {
        let d = (*b - *a) * frac;
        *a += d;
        *b += d;
    });
    let full = move |_| {
        run.with_untracked(|r| if let Some(Ok(r)) = r {
            let n = r.signal_v.len();
            view_window.set((r.time.view().at(0), r.time.view().at(n.saturating_sub(1))));
        })
    };
    view! {
        <section class="card" aria-labelledby="signal-heading" id="signal">
            <h2 id="signal-heading">"Signal test"</h2>
            {move || settings.get().is_none().then(|| view! {
                <p class="note">"Describe the signal the circuit will see, or import a capture, and see how many false edges the design gives compared with a plain comparator."</p>
                <button id="signal-add" on:click=move |_| edit("", Box::new(|_| {}))>"Describe a signal"</button>
            })}
            <Show when=move || has_settings.get()>
                <div class="row">
                    <QuantityField id="sig-rate".to_string() label="Sample rate".to_string() unit="Hz" value=Signal::derive(move || settings.get().map(|s| s.definition.sample_rate_hz).unwrap_or(f64::NAN))
                        check=definition_check("sample_rate_hz", |d, v| d.sample_rate_hz = v)
                        on_value=Callback::new(move |v| edit("sig-rate", Box::new(move |s| s.definition.sample_rate_hz = v))) />
                    <QuantityField id="sig-duration".to_string() label="Duration".to_string() unit="s" value=Signal::derive(move || settings.get().map(|s| s.definition.duration_s).unwrap_or(f64::NAN))
                        check=definition_check("duration_s", |d, v| d.duration_s = v)
                        on_value=Callback::new(move |v| edit("sig-duration", Box::new(move |s| s.definition.duration_s = v))) />
                    <QuantityField id="sig-seed".to_string() label="Noise seed".to_string() unit="" value=Signal::derive(move || settings.get().map(|s| s.definition.seed as f64).unwrap_or(f64::NAN))
                        check=Callback::new(|v: f64| crate::fields::whole_number(v, 0.0, 9e15))
                        on_value=Callback::new(move |v: f64| edit("sig-seed", Box::new(move |s| s.definition.seed = v as u64))) />
                    <p class="note">{move || match settings.get().map(|s| s.source) {
                        Some(SignalSource::ImportedCapture { name }) => format!("Source: imported capture “{name}”"),
                        _ => "Source: built from the parts below".to_string(),
                    }}</p>
                </div>
                <h3>"Signal"</h3>
                {list_editor::<Component>("sig-comp", components, write_components, sample_rate, Component::validate)}
                <div class="row no-print">
                    <button class="quiet small" id="sig-add-dc" on:click=move |_| add_component(Component::Dc { level_v: 0.0 })>"+ DC"</button>
                    <button class="quiet small" id="sig-add-sine" on:click=move |_| add_component(Component::Sine { amplitude_v: 1.0, frequency_hz: 50.0, phase_deg: 0.0 })>"+ sine"</button>
                    <button class="quiet small" on:click=move |_| add_component(Component::Triangle { amplitude_v: 1.0, frequency_hz: 50.0, phase_deg: 0.0 })>"+ triangle"</button>
                    <button class="quiet small" on:click=move |_| add_component(Component::Square { amplitude_v: 1.0, frequency_hz: 50.0, phase_deg: 0.0, duty: 0.5, rise_time_s: 1e-4 })>"+ square"</button>
                    <button class="quiet small" on:click=move |_| add_component(Component::Ramp { slope_v_per_s: 10.0, start_s: 0.0, stop_s: None })>"+ ramp"</button>
                    <button class="quiet small" on:click=move |_| add_component(Component::RcApproach { step_v: 1.0, time_constant_s: 0.01, start_s: 0.0 })>"+ RC approach"</button>
                    <button class="quiet small" on:click=move |_| add_component(Component::Drift { rate_v_per_s: 0.1 })>"+ drift"</button>
                </div>
                <h3>"Noise"</h3>
                {list_editor::<NoiseSource>("sig-noise", noise, write_noise, sample_rate, NoiseSource::validate)}
                <div class="row no-print">
                    <button class="quiet small" id="sig-add-white" on:click=move |_| add_noise(NoiseSource::White { rms_v: 0.02 })>"+ white noise"</button>
                    <button class="quiet small" on:click=move |_| add_noise(NoiseSource::BandLimited { rms_v: 0.02, corner_hz: 1000.0, poles: 1 })>"+ band-limited noise"</button>
                    <button class="quiet small" id="sig-add-hum" on:click=move |_| add_noise(NoiseSource::Hum { mains: Default::default(), amplitude_v: 0.075, phase_deg: 0.0, harmonics: Vec::new() })>"+ mains hum"</button>
                    <button class="quiet small" on:click=move |_| add_noise(NoiseSource::Spikes { rate_hz: 5.0, amplitude_v: 0.5, decay_s: 1e-4, polarity: Default::default() })>"+ spikes"</button>
                </div>
            </Show>
            <div class="row no-print">
                <div class="field">
                    <label for="csv-file">"…or import a capture (CSV of time and voltage)"</label>
                    <input id="csv-file" type="file" accept=".csv,.txt,text/csv,text/plain" on:change=on_file />
                </div>
                {move || import_progress.get().map(|p| view! {
                    <progress id="csv-progress" max="1" value=p.to_string()></progress>
                    <button class="quiet small" id="csv-cancel" on:click=move |_| {
                        cancel_import();
                        import_generation.update(|g| *g += 1);
                        import_progress.set(None);
                        import_status.set(Some(Err("import cancelled".into())));
                    }>"Cancel"</button>
                })}
            </div>
            {move || import_status.get().map(|s| match s {
                Ok(m) => view! { <p class="note" id="csv-status">{m}</p> }.into_any(),
                Err(e) => view! { <pre class="error" id="csv-error" role="alert">{e}</pre> }.into_any(),
            })}
            {move || settings.get().is_some().then(|| view! {
                <div class="row no-print">
                    <button id="signal-run" on:click=move |_| simulate()>"Run the signal test"</button>
                    <button id="signal-sweep" class="quiet" on:click=sweep>"Sweep the noise level"</button>
                    <super::progress::JobProgress id="signal" status=progress.into() on_cancel=cancel />
                </div>
            })}
            {move || run.get().and_then(|r| r.err()).map(|e| view! { <p class="error" id="signal-error" role="alert">{e}</p> })}
            {move || kept.get().map(|k| {
                let (rep, elapsed_ms, current) = (k.result, k.elapsed_ms, k.current);
                {
                    let rep = &rep;
                    let fe = |c: &Option<hysteron_core::signal::trigger::EdgeComparison>| c.map(|c| c.false_edges as f64);
                    let d_false = fe(&rep.design.comparison);
                    let b_false = fe(&rep.baseline.comparison);
                    view! {
                        {(!current).then(|| view! {
                            <p class="stale" id="signal-stale" role="status"><strong>"Out of date — run again."</strong>
                                " The circuit or the signal changed since this test; the figures below are from the design as it was."</p>
                        })}
                        {(rep.noise.is_some() && rep.normal_sampler != hysteron_core::rng::NORMAL_SAMPLER).then(|| view! {
                            <p class="note" id="signal-sampler" role="status">"This test's noise was drawn by an earlier version of Hysteron's random-number method: running it again with the same seed draws other noise, so the edge counts may differ a little."</p>
                        })}
                        <div class="signal-result" class:out-of-date=!current>
                        <table class="grid" id="signal-results">
                            <thead><tr><th></th><th>"this design"</th><th>"plain comparator"</th></tr></thead>
                            <tbody>
                                <tr><td>"thresholds"</td><td>{format!("{:.3} / {:.3} V", rep.design.thresholds.vt_upper_v, rep.design.thresholds.vt_lower_v)}</td><td>{format!("{:.3} V", rep.baseline_level_v)}</td></tr>
                                <tr><td>"output edges"</td>
                                    <td><output id="edges-design" data-value=rep.design.outcome.edges.to_string()>{rep.design.outcome.edges}</output></td>
                                    <td><output id="edges-baseline" data-value=rep.baseline.outcome.edges.to_string()>{rep.baseline.outcome.edges}</output></td></tr>
                                <tr><td>"false edges"</td>
                                    <td><output id="false-edges-design" data-value=d_false.map(|x| x.to_string()).unwrap_or_default()>{d_false.map(|x| x.to_string()).unwrap_or_else(|| "— (no noise-free reference for a capture)".into())}</output></td>
                                    <td><output id="false-edges-baseline" data-value=b_false.map(|x| x.to_string()).unwrap_or_default()>{b_false.map(|x| x.to_string()).unwrap_or_else(|| "—".into())}</output></td></tr>
                                <tr><td>"intended edges"</td><td>{rep.design.comparison.map(|c| c.intended_edges.to_string()).unwrap_or_default()}</td><td>{rep.baseline.comparison.map(|c| c.intended_edges.to_string()).unwrap_or_default()}</td></tr>
                            </tbody>
                        </table>
                        {rep.rice.map(|rc| view! { <p id="rice">{format!(
                            "Rice's formula: for at most {} false edges per edge on the slowest edge ({:.3} V/s) the hysteresis should be at least {:.1} mV; this design has {:.1} mV ({}).",
                            rc.target_false_edges_per_edge, rc.slowest_slope_v_per_s, rc.min_hysteresis_v * 1e3, rc.design_hysteresis_v * 1e3,
                            if rc.design_meets_target { "enough" } else { "not enough" })}</p> })}
                        {rep.noise.map(|n| view! { <p class="note">{format!("Noise: {:.1} mV RMS, {:.1} mV peak-to-peak measured.", n.measured_rms_v * 1e3, n.measured_peak_to_peak_v * 1e3)}</p> })}
                        {rep.timing.jitter_upper_s.map(|j| view! { <p class="note">{format!("Edge timing jitter at VT+: {:.2} µs RMS (noise ÷ slope).", j * 1e6)}</p> })}
                        {rep.sweep.clone().map(|sw| view! {
                            <table class="grid" id="sweep">
                                <thead><tr><th>"noise RMS"</th><th>"false edges, design"</th><th>"false edges, plain"</th></tr></thead>
                                <tbody>{sw.points.iter().map(|p| view! {
                                    <tr><td>{format!("{:.2} mV", p.noise_rms_v * 1e3)}</td><td>{p.design.false_edges}</td><td>{p.baseline.false_edges}</td></tr>
                                }).collect_view()}</tbody>
                            </table>
                            <p class="note">{format!("The design starts to fail at {}; the plain comparator at {}.",
                                sw.design_fails_at_rms_v.map(|v| format!("{:.2} mV RMS", v * 1e3)).unwrap_or_else(|| "no level swept".into()),
                                sw.baseline_fails_at_rms_v.map(|v| format!("{:.2} mV RMS", v * 1e3)).unwrap_or_else(|| "no level swept".into()))}</p>
                        })}
                        {rep.notes.iter().map(|n| view! { <p class="note">{n.clone()}</p> }).collect_view()}
                        <p class="note" id="signal-time" data-ms=elapsed_ms.to_string() data-current=current.to_string()>{format!("{} samples simulated in {elapsed_ms:.1} ms.", rep.samples)}</p>
                        {move || run.with(|r| r.is_none()).then(|| view! { <p class="note" id="signal-no-waveforms">"The waveforms are not kept with the design: run the test again to see them."</p> })}
                        </div>
                    }.into_any()
                }
            })}
            <div class="time-view" class:hidden=move || !run.with(|r| matches!(r, Some(Ok(_)))) class:waves-pending=move || !waves_current.get()>
                <div class="row no-print">
                    <button class="quiet small" id="zoom-in" on:click=move |_| zoom(0.5)>"Zoom in"</button>
                    <button class="quiet small" id="zoom-out" on:click=move |_| zoom(2.0)>"Zoom out"</button>
                    <button class="quiet small" on:click=move |_| pan(-0.25)>"◀ Earlier"</button>
                    <button class="quiet small" on:click=move |_| pan(0.25)>"Later ▶"</button>
                    <button class="quiet small" on:click=full>"Whole record"</button>
                    <span class="note" id="time-window">{move || { let (a, b) = view_window.get(); format!("{:.6} s … {:.6} s", a, b) }}</span>
                </div>
                <canvas id="time-plot" node_ref=canvas role="img" aria-label="Signal with the thresholds on top; below it, each in its own lane, the design's output and the plain comparator's output; triangles mark output edges"
                    on:wheel=move |ev| { ev.prevent_default(); zoom(if ev.delta_y() > 0.0 { 1.25 } else { 0.8 }); }
                    on:mousemove=move |ev: leptos::ev::MouseEvent| {
                        let v = canvas.get_untracked().and_then(|c| plot::current_frame(&c)).and_then(|f| f.value_at(ev.offset_x() as f64, ev.offset_y() as f64));
                        hover.set(v.map(|(t, y)| format!("t = {t:.6} s, {y:.3} V")).unwrap_or_default());
                    }
                    on:mouseleave=move |_| hover.set(String::new())></canvas>
                <output class="hover" id="time-hover">{move || hover.get()}</output>
            </div>
        </section>
    }
}

thread_local! {
    /// The capture import running on the compute workers, if any.
    static IMPORT_JOB: std::cell::RefCell<Option<crate::jobs::JobHandle>> = const { std::cell::RefCell::new(None) };
}

/// Stops a running capture import.
fn cancel_import() {
    if let Some(h) = IMPORT_JOB.with(|j| j.borrow_mut().take()) {
        h.cancel();
    }
}

/// Reads an imported file on a compute worker (`crate::jobs`, `Job::CsvImport`; on the page in
/// slices where workers are refused), reporting progress.
fn parse_slices(
    file: web_sys::Blob,
    name: String,
    capture: RwSignal<Option<std::sync::Arc<Capture>>>,
    status: RwSignal<Option<Result<String, String>>>,
    progress: RwSignal<Option<f64>>,
    nb: Notebook,
    ticket: (RwSignal<u64>, u64),
) {
    cancel_import();
    let current = move || ticket.0.get_untracked() == ticket.1;
    let handle = crate::jobs::start_import(
        file,
        CsvOptions::default(),
        move |st| {
            if current() {
                progress.set(Some(st.fraction()));
            }
        },
        move |out| {
            if !current() {
                return; // cancelled, or a newer import started
            }
            IMPORT_JOB.with(|j| j.borrow_mut().take());
            progress.set(None);
            match out {
                Err(e) => status.set(Some(Err(e))),
                Ok(JobOutput::Capture(c)) => {
                    status.set(Some(Ok(format!(
                        "Read {} samples from “{}” ({}).{}",
                        c.volts.len(),
                        name,
                        c.format.describe(),
                        if c.skipped_count == 0 { String::new() } else { format!(" {} lines were not samples; see the list (first {}).", c.skipped_count, c.skipped.len()) }
                    ))));
                    capture.set(Some(std::sync::Arc::new(c)));
                    let n = name.clone();
                    nb.edit(move |r| {
                        let mut s = r.signal.clone().unwrap_or_default();
                        s.source = SignalSource::ImportedCapture { name: n.clone() };
                        r.signal = Some(s);
                    });
                }
                Ok(_) => status.set(Some(Err("the worker returned another study's result".into()))),
            }
        },
    );
    if !handle.is_finished() {
        IMPORT_JOB.with(|j| *j.borrow_mut() = Some(handle));
    }
}

