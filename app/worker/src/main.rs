//! The compute worker: a second WebAssembly module that Trunk builds as a web worker
//! (`<link data-trunk rel="rust" data-type="worker" data-loader-shim>` in app/index.html; the
//! files keep the fixed names `hysteron-worker_loader.js`, `hysteron-worker.js` and
//! `hysteron-worker_bg.wasm`, since the page must name them at run time).
//!
//! Protocol (one job per message; the page's side is `app/src/jobs.rs`):
//! - page → worker: `{ job: "<core::jobs::Job as JSON>", arrays: [Float64Array…], slice_ms, text? }`,
//!   the job's large vectors taken out with `Job::take_arrays`, and a CSV import's file text
//!   taken out of the job into `text` (a string of its own, not escaped inside the JSON);
//! - worker → page: `{ kind: "progress", done, total, unit }` once before the work starts (the
//!   announced bound) and after each slice (at most every `slice_ms`), then
//!   `{ kind: "result", output: "<JobOutput as JSON>", output_kind: "<JobOutput::kind>", arrays: [Float64Array…] }` with the arrays
//!   transferred (not copied), with `began_at` and `ended_at` (when the worker took the job and
//!   sent the result, ms since the epoch, for the page's job timeline), or `{ kind: "error", message }`.
//!
//! Cancel: the page terminates the worker, which stops the work at once wherever it is.
//! The work runs in slices of `core::jobs::Running::step`, with a budget adapted so that a slice
//! takes about `slice_ms`; nothing here does math.

#[cfg(target_arch = "wasm32")]
mod worker {
    use hysteron_core::jobs::{Job, JobOutput, Running};
    use wasm_bindgen::prelude::*;
    use wasm_bindgen::JsCast;
    use web_sys::{DedicatedWorkerGlobalScope, MessageEvent};

    fn scope() -> Option<DedicatedWorkerGlobalScope> {
        js_sys::global().dyn_into::<DedicatedWorkerGlobalScope>().ok()
    }

    fn now_ms() -> f64 {
        scope().and_then(|s| s.performance()).map(|p| p.now()).unwrap_or(0.0)
    }

    fn set(o: &js_sys::Object, k: &str, v: &JsValue) {
        let _ = js_sys::Reflect::set(o, &JsValue::from_str(k), v);
    }

    fn post(msg: &js_sys::Object, transfer: Option<&js_sys::Array>) {
        if let Some(s) = scope() {
            let _ = match transfer {
                Some(t) => s.post_message_with_transfer(msg, t),
                None => s.post_message(msg),
            };
        }
    }

    fn post_error(message: &str) {
        let o = js_sys::Object::new();
        set(&o, "kind", &"error".into());
        set(&o, "message", &message.into());
        post(&o, None);
    }

    fn post_progress(done: u64, total: u64, unit: &str) {
        let o = js_sys::Object::new();
        set(&o, "kind", &"progress".into());
        set(&o, "done", &(done as f64).into());
        set(&o, "total", &(total as f64).into());
        set(&o, "unit", &unit.into());
        post(&o, None);
    }

    fn arrays_in(v: &JsValue) -> Vec<Vec<f64>> {
        js_sys::Array::from(v).iter().map(|a| js_sys::Float64Array::from(a).to_vec()).collect()
    }

    /// Now as milliseconds since the epoch (`timeOrigin + now()`), which the page can place on its own clock.
    fn epoch_ms() -> f64 {
        scope().and_then(|s| s.performance()).map(|p| p.time_origin() + p.now()).unwrap_or(0.0)
    }

    fn run(data: JsValue) -> Result<(), String> {
        let began_at = epoch_ms();
        let get = |k: &str| js_sys::Reflect::get(&data, &JsValue::from_str(k)).unwrap_or(JsValue::UNDEFINED);
        let text = get("job").as_string().ok_or("the job message has no job: send {job, arrays}")?;
        let slice_ms = get("slice_ms").as_f64().filter(|x| *x > 0.0).unwrap_or(30.0);
        let mut job: Job = serde_json::from_str(&text).map_err(|e| format!("the job is not readable: {e}"))?;
        job.put_arrays(arrays_in(&get("arrays"))).map_err(|e| e.to_string())?;
        if let Job::CsvImport { text, .. } = &mut job {
            // An imported file comes as the browser's file, read and decoded here (UTF-8, as the
            // page's FileReader would), so its text never crosses the page's thread.
            let file = get("file");
            if let Some(t) = get("text").as_string() {
                *text = t;
            } else if let Some(blob) = file.dyn_ref::<web_sys::Blob>() {
                let reader = web_sys::FileReaderSync::new().map_err(|_| "this browser cannot read files in a worker".to_string())?;
                *text = reader.read_as_text(blob).map_err(|_| "the browser could not read that file".to_string())?;
            }
        }
        let mut running = Running::start(job).map_err(|e| e.to_string())?;
        let unit = running.unit();
        let total = running.progress().total;
        post_progress(0, total, unit);
        // Start small and grow the budget so that each slice takes about `slice_ms`.
        let mut budget: u64 = 1024;
        while !running.progress().is_done() {
            let t0 = now_ms();
            let before = running.progress().done;
            let p = running.step(budget).map_err(|e| e.to_string())?;
            let dt = now_ms() - t0;
            let did = (p.done - before).max(1) as f64;
            let rate = did / dt.max(0.05);
            budget = (rate * slice_ms).clamp(1.0, 1e12) as u64;
            post_progress(p.done, p.total, unit);
        }
        let mut out: JobOutput = running.finish().map_err(|e| e.to_string())?;
        let arrays = out.take_arrays();
        let json = serde_json::to_string(&out).map_err(|e| format!("the result could not be written: {e}"))?;
        let list = js_sys::Array::new();
        let transfer = js_sys::Array::new();
        for a in arrays {
            let f = js_sys::Float64Array::new_with_length(a.len() as u32);
            f.copy_from(&a);
            transfer.push(&f.buffer());
            list.push(&f);
        }
        let o = js_sys::Object::new();
        set(&o, "kind", &"result".into());
        set(&o, "output", &json.into());
        set(&o, "output_kind", &out.kind().into());
        set(&o, "arrays", &list);
        set(&o, "began_at", &began_at.into());
        set(&o, "ended_at", &epoch_ms().into());
        post(&o, Some(&transfer));
        Ok(())
    }

    /// Runs a small Monte Carlo and a small search of the first template and a short signal study
    /// once, before the worker says it is ready, so the engine has compiled their hot loops at full
    /// speed before the first real study (a fresh worker's first run is otherwise slower: a first
    /// 1 M-sample signal study took about twice as long as the next one). Results are dropped.
    fn warm_up() {
        let Some(r) = hysteron_core::catalog::templates().first().map(|s| s.record()) else { return };
        let mut settings = r.tolerance.clone().unwrap_or_default();
        settings.monte_carlo.trials = 3000;
        let mc = Job::MonteCarlo { circuit: r.circuit.clone(), settings, trials: None };
        let _ = Running::start(mc).and_then(|j| j.run_to_end(u64::MAX));
        if let Ok(targets) = hysteron_core::overview::thresholds(&r.circuit) {
            let search = Job::Search {
                circuit: r.circuit.clone(),
                targets,
                settings: hysteron_core::search::SearchSettings { series: hysteron_core::eseries::ESeries::E24, ..Default::default() },
                checks: r.checks,
                combinations: None,
            };
            let _ = Running::start(search).and_then(|j| j.run_to_end(u64::MAX));
        }
        warm_up_signal();
    }

    /// A short signal study (40,000 samples of a noisy sine with hum and band-limited noise, the
    /// kinds of source the demos use), so that the signal chain's loops are compiled at full speed
    /// before the first real study too. Built here rather than read from a demo record, so the
    /// worker does not carry the demo catalogue.
    fn warm_up_signal() {
        use hysteron_core::analysis::{Sense, Thresholds};
        use hysteron_core::signal::generate::{Component, SignalDefinition};
        use hysteron_core::signal::noise::{MainsFrequency, NoiseSource};
        use hysteron_core::signal::report::SignalSettings;
        use hysteron_core::signal::trigger::TriggerDesign;
        let settings = SignalSettings {
            definition: SignalDefinition {
                sample_rate_hz: 200e3,
                duration_s: 0.2,
                seed: 1,
                components: vec![Component::Dc { level_v: 2.5 }, Component::Sine { amplitude_v: 2.0, frequency_hz: 40.0, phase_deg: 0.0 }],
                noise: vec![
                    NoiseSource::Hum { mains: MainsFrequency::Hz50, amplitude_v: 0.05, phase_deg: 0.0, harmonics: vec![] },
                    NoiseSource::BandLimited { rms_v: 0.03, corner_hz: 5e3, poles: 2 },
                    NoiseSource::White { rms_v: 0.01 },
                ],
            },
            ..Default::default()
        };
        let design = TriggerDesign {
            thresholds: Thresholds { vt_upper_v: 3.0, vt_lower_v: 2.0 },
            output_high_v: 5.0,
            output_low_v: 0.0,
            sense: Sense::Inverting,
        };
        let job = Job::Signal { design, settings, capture: None, display_points: 4000, output: None, front: None };
        let _ = Running::start(job).and_then(|j| j.run_to_end(u64::MAX));
    }

    pub fn start() {
        let Some(s) = scope() else { return };
        let on_message = Closure::<dyn FnMut(MessageEvent)>::new(move |ev: MessageEvent| {
            if let Err(e) = run(ev.data()) {
                post_error(&e);
            }
        });
        s.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
        on_message.forget();
        warm_up();
        // Tell the page the module is ready for jobs.
        let o = js_sys::Object::new();
        set(&o, "kind", &"ready".into());
        post(&o, None);
    }
}

fn main() {
    #[cfg(target_arch = "wasm32")]
    worker::start();
}
