//! Long studies off the page's thread: [`start`] hands a `core::jobs::Job` to the compute workers
//! (`app/worker/`, built by Trunk as `hysteron-worker_loader.js`), shows progress through a callback and
//! calls back once with the result; [`JobHandle::cancel`] stops it at once (the workers running it
//! are terminated). A job that `core::jobs::split` can cut (Monte Carlo by trials, the noise sweep
//! by levels, a standard-value search without the distinct rule by ranges of combinations) is spread over `navigator.hardwareConcurrency` workers and merged in order with
//! the kind's own `core::jobs::merge_*`, which gives exactly the single-run result for the same seed.
//! A kind whose merge is heavy work names a second round (`Answers::second`): the parts' answers
//! are gathered into new jobs for the pooled workers (a Monte Carlo's four figures' statistics,
//! `core::job_rounds`), whose answers are then put together; progress shows the first round only.
//! Progress is first shown once a job has run [`PROGRESS_QUIET_MS`], then at most every
//! [`PROGRESS_EVERY_MS`] (see [`report`]): a short study changes nothing on the page until its
//! result, and a long one does not repaint at each worker's slice.
//!
//! Each caller names what its job answers (`core::job_answers::Answers`, for instance
//! `Answers::MONTE_CARLO`): the worker's result is read as that kind only, so a study's result
//! code travels in the piece of the page that runs the study, not in the page's first module.
//!
//! Workers are kept in a small pool once their module has loaded ([`prewarm`] starts them in the
//! background, [`pool_size`]: one per hardware thread plus [`SPARE_WORKERS`]; workers still
//! starting are counted, so repeated calls do not start more), so a run pays no module start-up. Where the browser refuses to start a worker, the
//! job runs on the page in slices between frames (`crate::tick::later`), with the same progress and
//! Cancel, and the first such job's status carries [`fallback_note`] (shown once). A worker that
//! fails to load (an error event before it says it is ready, or no word within
//! [`READY_TIMEOUT_MS`]) counts as refused.
//!
//! The single file (`cargo xtask single-file`) cannot name a worker file; it sets
//! `globalThis.hysteronWorkerUrl` to a `blob:` URL of the worker's script with its WebAssembly
//! inlined, and workers start from that. `<html data-compute>` says where studies run: `workers`
//! once a worker has said it is ready, `page` once workers were refused.

use hysteron_core::job_answers::Answers;
use hysteron_core::job_rounds::Gathered;
use hysteron_core::jobs::{split, Job, JobOutput, Progress, Running};
use std::cell::{Cell, RefCell};
use std::rc::Rc;
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;

/// The worker's loader script, next to index.html (Trunk gives workers fixed names).
const WORKER_URL: &str = "./hysteron-worker_loader.js";
/// Most workers one job is spread over.
const MAX_WORKERS: usize = 8;
/// Target length of a slice on a worker (progress messages at most this often), ms.
const WORKER_SLICE_MS: f64 = 25.0;
/// How long a job runs before its progress is first shown, ms (see [`report`]).
pub const PROGRESS_QUIET_MS: f64 = 150.0;
/// Shortest time between two progress displays, ms (see [`report`]).
const PROGRESS_EVERY_MS: f64 = 100.0;
/// Target length of a slice when the job runs on the page, ms (well under one frame's budget).
const PAGE_SLICE_MS: f64 = 8.0;
/// How long a job waits for a new worker to say it is ready before it runs on the page, ms.
pub const READY_TIMEOUT_MS: i32 = 15_000;

/// Where a job stands, for the progress display.
#[derive(Debug, Clone, PartialEq)]
pub struct JobStatus {
    /// Units done over all parts.
    pub done: u64,
    /// Units in all (announced before the work starts; 0 until every part has announced).
    pub total: u64,
    /// What the units count ("trials", "sample passes", …).
    pub unit: String,
    /// When the job started, ms (performance.now()).
    pub started_ms: f64,
    /// When this status was taken, ms.
    pub now_ms: f64,
    /// Workers running it (0: on the page, in slices).
    pub workers: usize,
    /// Said once per page, with the first job that runs on the page because workers were refused.
    pub note: Option<&'static str>,
}

impl JobStatus {
    /// Fraction done, 0 to 1.
    pub fn fraction(&self) -> f64 {
        Progress { done: self.done, total: self.total }.fraction()
    }

    /// Milliseconds left, from the rate so far (`None` before any progress).
    pub fn remaining_ms(&self) -> Option<f64> {
        let f = self.fraction();
        let spent = self.now_ms - self.started_ms;
        (f > 0.0 && f < 1.0 && spent > 0.0).then(|| spent * (1.0 - f) / f)
    }
}

thread_local! {
    static POOL: RefCell<Vec<web_sys::Worker>> = const { RefCell::new(Vec::new()) };
    static NO_WORKERS: Cell<bool> = const { Cell::new(false) };
    /// Workers started by [`prewarm`] that have not said they are ready yet.
    static STARTING: Cell<usize> = const { Cell::new(0) };
    static NOTE_GIVEN: Cell<bool> = const { Cell::new(false) };
}

/// What the page says once when workers are refused.
const FALLBACK_NOTE: &str = "This browser did not start a background worker for this page, so long studies run on the page in slices: it stays usable but they take longer.";

/// Whether workers could not be started, so studies run on the page in slices.
pub fn fallback_note() -> Option<&'static str> {
    NO_WORKERS.with(|c| c.get()).then_some(FALLBACK_NOTE)
}

/// The note, the first time it is asked for after workers were refused; `None` after that.
fn take_note() -> Option<&'static str> {
    (!NOTE_GIVEN.with(|c| c.replace(true))).then_some(FALLBACK_NOTE)
}

/// Marks where studies run on `<html data-compute>` (`workers` or `page`).
fn mark(place: &str) {
    if let Some(e) = web_sys::window().and_then(|w| w.document()).and_then(|d| d.document_element()) {
        let _ = e.set_attribute("data-compute", place);
    }
}

/// Workers are refused: every later job runs on the page.
fn refuse_workers() {
    NO_WORKERS.with(|c| c.set(true));
    mark("page");
}

/// The worker's script: the single file's `blob:` URL when it set one, else the loader file.
fn worker_url() -> String {
    js_sys::Reflect::get(&js_sys::global(), &JsValue::from_str("hysteronWorkerUrl"))
        .ok()
        .and_then(|v| v.as_string())
        .unwrap_or_else(|| WORKER_URL.to_string())
}

/// How many workers to spread a job over: `navigator.hardwareConcurrency`, 1 to 8.
pub fn worker_count() -> usize {
    web_sys::window()
        .map(|w| w.navigator().hardware_concurrency())
        .filter(|n| n.is_finite() && *n >= 1.0)
        .map(|n| (n as usize).min(MAX_WORKERS))
        .unwrap_or(1)
}

fn field(v: &JsValue, k: &str) -> JsValue {
    js_sys::Reflect::get(v, &JsValue::from_str(k)).unwrap_or(JsValue::UNDEFINED)
}

/// A starting worker's two continuations, ready and failed; whichever happens first takes both.
type StartOutcome = (Box<dyn FnOnce(web_sys::Worker)>, Box<dyn FnOnce()>);

/// A fresh worker; `on_ready` runs when its module has loaded, `on_fail` (instead) when it cannot
/// be started, reports an error before it is ready, or is not ready within [`READY_TIMEOUT_MS`].
/// Returns false when the browser refused at once (`on_fail` has not run).
fn spawn(on_ready: impl FnOnce(web_sys::Worker) + 'static, on_fail: impl FnOnce() + 'static) -> bool {
    let Ok(w) = web_sys::Worker::new(&worker_url()) else { return false };
    // Exactly one of the two runs.
    let outcome: Rc<RefCell<Option<StartOutcome>>> = Rc::new(RefCell::new(Some((Box::new(on_ready), Box::new(on_fail)))));
    let fail = {
        let (o, w) = (outcome.clone(), w.clone());
        move || {
            let taken = o.borrow_mut().take();
            if let Some((_, f)) = taken {
                w.set_onmessage(None);
                w.set_onerror(None);
                w.terminate();
                f();
            }
        }
    };
    let (o, w2) = (outcome.clone(), w.clone());
    let cb = Closure::<dyn FnMut(web_sys::MessageEvent)>::new(move |ev: web_sys::MessageEvent| {
        if field(&ev.data(), "kind").as_string().as_deref() == Some("ready") {
            w2.set_onmessage(None);
            w2.set_onerror(None);
            mark("workers");
            let taken = o.borrow_mut().take();
            if let Some((f, _)) = taken {
                f(w2.clone());
            }
        }
    });
    w.set_onmessage(Some(cb.as_ref().unchecked_ref()));
    cb.forget(); // one small closure per worker started; workers are pooled and reused
    let on_error = Closure::once_into_js(fail.clone());
    w.set_onerror(Some(on_error.unchecked_ref()));
    crate::tick::after_ms(READY_TIMEOUT_MS, fail);
    true
}

/// Workers kept ready beyond [`worker_count`]. Two spares (for the studies that follow the inputs
/// while a split study wants the whole pool) were tried and measured slower on a 2-core machine:
/// the replacements started after each cancelled followed study compile their module on the same
/// cores the next study runs on (Monte Carlo 100k about 40 ms against 20–30 ms, headless Chromium).
pub const SPARE_WORKERS: usize = 0;

/// How many workers the pool keeps ready: [`worker_count`] plus [`SPARE_WORKERS`], at most 8.
pub fn pool_size() -> usize {
    (worker_count() + SPARE_WORKERS).min(MAX_WORKERS)
}

/// Starts workers in the background until `n` are ready or starting, so a study does not wait
/// for their module.
pub fn prewarm(n: usize) {
    if NO_WORKERS.with(|c| c.get()) {
        return;
    }
    let have = POOL.with(|p| p.borrow().len()) + STARTING.with(|c| c.get());
    for _ in have..n.min(MAX_WORKERS) {
        STARTING.with(|c| c.set(c.get() + 1));
        let started = spawn(
            |w| {
                STARTING.with(|c| c.set(c.get().saturating_sub(1)));
                POOL.with(|p| p.borrow_mut().push(w))
            },
            || {
                STARTING.with(|c| c.set(c.get().saturating_sub(1)));
                refuse_workers()
            },
        );
        if !started {
            STARTING.with(|c| c.set(c.get().saturating_sub(1)));
            refuse_workers();
            return;
        }
    }
}

/// A ready worker from the pool, or a new one once it is ready; `on_fail` runs when the new one
/// fails to start. False when the browser refused at once.
fn acquire(then: impl FnOnce(web_sys::Worker) + 'static, on_fail: impl FnOnce() + 'static) -> bool {
    if let Some(w) = POOL.with(|p| p.borrow_mut().pop()) {
        then(w);
        return true;
    }
    spawn(then, on_fail)
}

#[derive(Default)]
struct Part {
    worker: Option<web_sys::Worker>,
    done: u64,
    total: Option<u64>,
    output: Option<JobOutput>,
    /// The part's result arrays, kept as the browser's arrays for a second round (never copied
    /// into the page's memory: they go on to the second round's workers).
    forward: Vec<js_sys::Float64Array>,
    _on_message: Option<Closure<dyn FnMut(web_sys::MessageEvent)>>,
}

/// What a job calls once with its result: the merged output, or why it failed.
type OnDone = Box<dyn FnOnce(Result<JobOutput, String>)>;

struct Shared {
    job: Job,
    /// How the workers' answers to this job are read and merged.
    answers: Answers,
    parts: Vec<Part>,
    unit: String,
    started_ms: f64,
    /// Where the job's time went (see [`crate::timeline`]).
    timeline: crate::timeline::Timeline,
    /// In a second round (see [`Answers::second`]): what the first round left for the finishing
    /// step. The parts are then the second round's.
    kept: Option<JobOutput>,
    /// When a status was last shown, and whether it had every part's total (see [`report`]).
    shown: Option<(f64, bool)>,
    /// A timer will show the status (see [`report`]).
    show_pending: bool,
    finished: bool,
    /// The job was moved onto the page (workers refused); worker messages are ignored from then on.
    on_page: bool,
    note: Option<&'static str>,
    on_progress: Rc<dyn Fn(JobStatus)>,
    on_done: Option<OnDone>,
    /// A CSV import's file, as the browser holds it (see [`start_import`]).
    file: Option<web_sys::Blob>,
}

impl Shared {
    /// Milliseconds before `status` may be shown (0 or less: now). The first status waits until
    /// the job has run [`PROGRESS_QUIET_MS`] (unless it carries the note that workers were
    /// refused), the first with every part's total known is shown at once, and after that one
    /// at most every [`PROGRESS_EVERY_MS`].
    fn wait_before_showing(&self, status: &JobStatus) -> f64 {
        match self.shown {
            None if status.note.is_some() => 0.0,
            None => PROGRESS_QUIET_MS - (status.now_ms - status.started_ms),
            Some((_, false)) if status.total > 0 => 0.0,
            Some((at, _)) => PROGRESS_EVERY_MS - (status.now_ms - at),
        }
    }

    fn status(&self) -> JobStatus {
        let all_known = self.parts.iter().all(|p| p.total.is_some());
        JobStatus {
            done: self.parts.iter().map(|p| p.done).sum(),
            total: if all_known { self.parts.iter().filter_map(|p| p.total).sum() } else { 0 },
            unit: self.unit.clone(),
            started_ms: self.started_ms,
            now_ms: crate::tick::now_ms(),
            workers: if self.on_page { 0 } else { self.parts.len() },
            note: self.note,
        }
    }
}

fn finish(shared: &Rc<RefCell<Shared>>, result: Result<JobOutput, String>) {
    let (cb, workers) = {
        let mut s = shared.borrow_mut();
        if s.finished {
            return;
        }
        s.finished = true;
        let workers: Vec<_> = s.parts.iter_mut().filter_map(|p| p.worker.take()).collect();
        for p in &mut s.parts {
            p._on_message = None;
        }
        (s.on_done.take(), workers)
    };
    {
        let mut s = shared.borrow_mut();
        s.timeline.note("finished");
        s.timeline.publish();
    }
    for w in workers {
        if result.is_ok() {
            w.set_onmessage(None);
            w.set_onerror(None);
            POOL.with(|p| p.borrow_mut().push(w));
        } else {
            w.terminate();
        }
    }
    if let Some(cb) = cb {
        cb(result);
    }
}

/// Shows the job's status through its progress callback when it is due
/// ([`Shared::wait_before_showing`]), or has a timer show the latest status once it is: a study
/// shorter than [`PROGRESS_QUIET_MS`] changes nothing on the page while it runs (laying out a
/// progress bar on a long page took 17 ms of the page's thread, in a CPU profile of a 100,000-trial
/// Monte Carlo on a 2-core machine, while both workers held the cores), and a long one repaints
/// its progress a few times a second, not at every worker's slice.
fn report(shared: &Rc<RefCell<Shared>>) {
    let next = {
        let mut s = shared.borrow_mut();
        if s.finished {
            return;
        }
        let status = s.status();
        let wait = s.wait_before_showing(&status);
        if wait <= 0.0 {
            s.shown = Some((status.now_ms, status.total > 0));
            Ok((status, s.on_progress.clone()))
        } else if !s.show_pending {
            s.show_pending = true;
            Err(Some(wait))
        } else {
            Err(None)
        }
    };
    match next {
        Ok((status, cb)) => cb(status),
        Err(Some(wait)) => {
            let sh = shared.clone();
            crate::tick::after_ms(wait.ceil() as i32, move || {
                sh.borrow_mut().show_pending = false;
                report(&sh);
            });
        }
        Err(None) => {}
    }
}

fn on_message(shared: &Rc<RefCell<Shared>>, index: usize, data: JsValue) {
    {
        let s = shared.borrow();
        if s.finished || s.on_page || index >= s.parts.len() {
            return;
        }
    }
    let kind = field(&data, "kind").as_string().unwrap_or_default();
    match kind.as_str() {
        "progress" => {
            {
                let mut s = shared.borrow_mut();
                if s.finished || s.kept.is_some() {
                    // The second round's progress is not shown: the first round's work is done.
                    return;
                }
                if let Some(u) = field(&data, "unit").as_string() {
                    s.unit = u;
                }
                let p = &mut s.parts[index];
                p.done = field(&data, "done").as_f64().unwrap_or(0.0) as u64;
                p.total = field(&data, "total").as_f64().map(|t| t as u64);
            }
            report(shared);
        }
        "error" => {
            let m = field(&data, "message").as_string().unwrap_or_else(|| "the study failed in the worker".into());
            finish(shared, Err(m));
        }
        "result" => {
            {
                let timeline = &mut shared.borrow_mut().timeline;
                timeline.note(format!("part{index}-arrived"));
                for (k, label) in [("began_at", "began"), ("ended_at", "ended")] {
                    if let Some(t) = field(&data, k).as_f64() {
                        timeline.note_at(format!("part{index}-{label}"), crate::timeline::from_epoch_ms(t));
                    }
                }
            }
            let text = field(&data, "output").as_string().unwrap_or_default();
            let kind = field(&data, "output_kind").as_string().unwrap_or_default();
            let arrays: Vec<_> = js_sys::Array::from(&field(&data, "arrays")).iter().map(js_sys::Float64Array::from).collect();
            let forward = {
                let s = shared.borrow();
                s.answers.second.is_some() && s.kept.is_none()
            };
            if forward {
                // A first round's arrays go on to the second round as they are.
                shared.borrow_mut().parts[index].forward = arrays;
                take_result(shared, index, &kind, &text, None);
            } else {
                // A large result (a 10 M-sample signal study) is copied over several tasks.
                let shared = shared.clone();
                crate::transfer::copy_in_slices(arrays, move |arrays| take_result(&shared, index, &kind, &text, Some(arrays)));
            }
        }
        _ => {}
    }
}

/// A part's result, its arrays copied in (`None`: left out, forwarded to a second round): kept,
/// its worker returned to the pool, and the job finished once every part has answered (nothing
/// when the job was cancelled meanwhile).
fn take_result(shared: &Rc<RefCell<Shared>>, index: usize, kind: &str, text: &str, arrays: Option<Vec<Vec<f64>>>) {
    let answers = {
        let s = shared.borrow();
        if s.finished || s.on_page || index >= s.parts.len() {
            return;
        }
        s.answers
    };
    let output = (answers.read)(kind, text).and_then(|mut o| match arrays {
        Some(a) => o.put_arrays(a).map(|_| o).map_err(|e| e.to_string()),
        None => Ok(o),
    });
    let output = match output {
        Ok(o) => o,
        Err(e) => return finish(shared, Err(e)),
    };
    shared.borrow_mut().timeline.note(format!("part{index}-read"));
    let complete = {
        let mut s = shared.borrow_mut();
        let p = &mut s.parts[index];
        p.output = Some(output);
        if let Some(t) = p.total {
            p.done = t;
        }
        if let Some(w) = p.worker.take() {
            w.set_onmessage(None);
            w.set_onerror(None);
            POOL.with(|pool| pool.borrow_mut().push(w));
        }
        p._on_message = None;
        s.parts.iter().all(|p| p.output.is_some())
    };
    if complete {
        let (job, outputs, kept) = {
            let mut s = shared.borrow_mut();
            let outputs: Vec<_> = s.parts.iter_mut().filter_map(|p| p.output.take()).collect();
            (s.job.clone(), outputs, s.kept.take())
        };
        let merged = match (answers.second, kept) {
            (Some(round), Some(kept)) => (round.finish)(&job, kept, outputs),
            (Some(round), None) => match (round.gather)(&job, outputs, worker_count()) {
                Ok(Gathered::Again { kept, jobs }) => return start_second_round(shared, kept, jobs),
                Ok(Gathered::Done(output)) => Ok(output),
                Err(e) => Err(e),
            },
            (None, _) => (answers.merge)(&job, outputs),
        };
        shared.borrow_mut().timeline.note("merged");
        finish(shared, merged.map_err(|e| e.to_string()));
    }
}

/// Sends the second round's `jobs` to workers from the pool (the first round's workers have just
/// been returned to it), keeping `kept` for the finishing step. A worker that cannot be had moves
/// the whole job onto the page, as in the first round.
fn start_second_round(shared: &Rc<RefCell<Shared>>, kept: JobOutput, jobs: Vec<Job>) {
    // The first round's arrays, per part; each job takes the ones it lists, every part's in part
    // order, transferred as they are (each is listed by one job only; one missing would leave its
    // job short, which its worker refuses with words).
    let mut forward: Vec<Vec<Option<js_sys::Float64Array>>> = {
        let mut s = shared.borrow_mut();
        s.timeline.note("gathered");
        s.kept = Some(kept);
        let forward = s.parts.iter_mut().map(|p| std::mem::take(&mut p.forward).into_iter().map(Some).collect()).collect();
        s.parts = jobs.iter().map(|_| Part::default()).collect();
        forward
    };
    for (i, job) in jobs.into_iter().enumerate() {
        let arrays: Vec<js_sys::Float64Array> = hysteron_core::job_rounds::forwarded_arrays(&job)
            .into_iter()
            .flat_map(|k| forward.iter_mut().filter_map(move |part| part.get_mut(k).and_then(Option::take)).collect::<Vec<_>>())
            .collect();
        let (sh, sh2) = (shared.clone(), shared.clone());
        if !acquire(move |w| send_with(&sh, i, job, Some(arrays), w), move || {
            refuse_workers();
            run_on_page(&sh2);
        }) {
            refuse_workers();
            run_on_page(shared);
            break;
        }
    }
}

fn send(shared: &Rc<RefCell<Shared>>, index: usize, job: Job, w: web_sys::Worker) {
    send_with(shared, index, job, None, w)
}

/// [`send`], with the job's arrays given as the browser's arrays (`forward`, transferred to the
/// worker) instead of taken out of the job.
fn send_with(shared: &Rc<RefCell<Shared>>, index: usize, mut job: Job, forward: Option<Vec<js_sys::Float64Array>>, w: web_sys::Worker) {
    if shared.borrow().finished || shared.borrow().on_page {
        POOL.with(|p| p.borrow_mut().push(w));
        return;
    }
    let sh = shared.clone();
    let cb = Closure::<dyn FnMut(web_sys::MessageEvent)>::new(move |ev: web_sys::MessageEvent| on_message(&sh, index, ev.data()));
    w.set_onmessage(Some(cb.as_ref().unchecked_ref()));
    // A worker that dies during the job (an uncaught error) ends the job with a message.
    let sh = shared.clone();
    let on_error = Closure::once_into_js(move |ev: web_sys::Event| {
        ev.prevent_default();
        let why = field(&ev, "message").as_string().unwrap_or_else(|| "an error".into());
        finish(&sh, Err(format!("the background worker stopped ({why}); run the study again")));
    });
    w.set_onerror(Some(on_error.unchecked_ref()));
    let arrays = job.take_arrays();
    // An imported file goes to the worker as the browser's file (a handle: its text is read and
    // decoded on the worker, see [`start_import`]); a text the job already holds travels as a
    // string of its own, not escaped inside the job's JSON on the page's thread.
    let csv_text: Option<(&str, JsValue)> = match &mut job {
        Job::CsvImport { text, .. } => match shared.borrow().file.clone() {
            Some(f) => Some(("file", f.into())),
            None => Some(("text", JsValue::from_str(&std::mem::take(text)))),
        },
        _ => None,
    };
    let text = match serde_json::to_string(&job) {
        Ok(t) => t,
        Err(e) => return finish(shared, Err(format!("the job could not be written: {e}"))),
    };
    let list = js_sys::Array::new();
    let transfer = js_sys::Array::new();
    let arrays = forward.unwrap_or_else(|| {
        arrays
            .iter()
            .map(|a| {
                let f = js_sys::Float64Array::new_with_length(a.len() as u32);
                f.copy_from(a);
                f
            })
            .collect()
    });
    for f in arrays {
        transfer.push(&f.buffer());
        list.push(&f);
    }
    let msg = js_sys::Object::new();
    let _ = js_sys::Reflect::set(&msg, &"job".into(), &text.into());
    let _ = js_sys::Reflect::set(&msg, &"arrays".into(), &list);
    let _ = js_sys::Reflect::set(&msg, &"slice_ms".into(), &WORKER_SLICE_MS.into());
    if let Some((key, t)) = csv_text {
        let _ = js_sys::Reflect::set(&msg, &key.into(), &t);
    }
    {
        let mut s = shared.borrow_mut();
        s.parts[index].worker = Some(w.clone());
        s.parts[index]._on_message = Some(cb);
    }
    shared.borrow_mut().timeline.note(format!("part{index}-sent"));
    if w.post_message_with_transfer(&msg, &transfer).is_err() {
        finish(shared, Err("the job could not be sent to the worker".into()));
    }
}

/// A running job.
#[derive(Clone)]
pub struct JobHandle {
    shared: Rc<RefCell<Shared>>,
}

impl JobHandle {
    /// Stops the job at once: its workers are terminated (on the page: no further slice runs).
    /// The done callback is not called.
    pub fn cancel(&self) {
        let workers: Vec<_> = {
            let mut s = self.shared.borrow_mut();
            s.finished = true;
            s.on_done = None;
            for p in &mut s.parts {
                p._on_message = None;
            }
            s.parts.iter_mut().filter_map(|p| p.worker.take()).collect()
        };
        let had_workers = !workers.is_empty();
        for w in workers {
            w.terminate();
        }
        // Replace the terminated workers in the background.
        if had_workers {
            crate::tick::after_ms(50, || prewarm(pool_size()));
        }
    }

    /// Whether the job has ended (done, failed or cancelled).
    pub fn is_finished(&self) -> bool {
        self.shared.borrow().finished
    }
}

/// Starts `job`: spread over the workers when it can be split, otherwise on one worker; on the
/// page in slices when workers are refused. `answers` reads and merges what the workers send back
/// (the [`Answers`] of the job's kind). `on_progress` gets the status after each slice; `on_done`
/// gets the merged output or the error, once (never after [`JobHandle::cancel`]).
pub fn start(
    job: Job,
    answers: Answers,
    on_progress: impl Fn(JobStatus) + 'static,
    on_done: impl FnOnce(Result<JobOutput, String>) + 'static,
) -> JobHandle {
    start_with(job, answers, None, Box::new(on_progress), Box::new(on_done))
}

/// Starts reading an imported file (`Job::CsvImport` with `options`), the browser's `file`, as
/// [`start`] does. The file goes to the worker as it is (a handle), which reads and decodes its
/// text there: copying a 40 MB file's text into the page's memory and back out took about 160 ms
/// on the page's thread in one task, and even handing the browser's string to the worker (a copy
/// the browser makes on the page's thread) left 52–58 ms tasks in half the 1 M-row imports (CPU
/// profiles; the reading itself left none). Where workers are refused the page reads the file
/// (`Blob.text()`) and copies the text in slices ([`crate::transfer::text_in_slices`]) before the
/// job runs on the page.
pub fn start_import(
    file: web_sys::Blob,
    options: hysteron_core::signal::csv::CsvOptions,
    on_progress: impl Fn(JobStatus) + 'static,
    on_done: impl FnOnce(Result<JobOutput, String>) + 'static,
) -> JobHandle {
    let job = Job::CsvImport { text: String::new(), options };
    start_with(job, Answers::CAPTURE, Some(file), Box::new(on_progress), Box::new(on_done))
}

fn start_with(
    job: Job,
    answers: Answers,
    file: Option<web_sys::Blob>,
    on_progress: Box<dyn Fn(JobStatus)>,
    on_done: Box<dyn FnOnce(Result<JobOutput, String>)>,
) -> JobHandle {
    let refused = NO_WORKERS.with(|c| c.get());
    let n = if refused { 1 } else { worker_count() };
    let started_ms = crate::tick::now_ms();
    let mut timeline = crate::timeline::Timeline::new(started_ms);
    let parts = split(&job, n).unwrap_or_else(|_| vec![job.clone()]);
    timeline.note("split");
    let shared = Rc::new(RefCell::new(Shared {
        job,
        answers,
        parts: parts.iter().map(|_| Part::default()).collect(),
        unit: String::new(),
        started_ms,
        timeline,
        kept: None,
        shown: None,
        show_pending: false,
        finished: false,
        on_page: false,
        note: None,
        on_progress: Rc::from(on_progress),
        on_done: Some(on_done),
        file,
    }));
    let handle = JobHandle { shared: shared.clone() };
    if refused {
        run_on_page(&shared);
        return handle;
    }
    for (i, part) in parts.into_iter().enumerate() {
        let (sh, sh2) = (shared.clone(), shared.clone());
        if !acquire(move |w| send(&sh, i, part, w), move || {
            refuse_workers();
            run_on_page(&sh2);
        }) {
            refuse_workers();
            run_on_page(&shared);
            break;
        }
    }
    handle
}

/// Moves the whole job onto the page (workers refused): stops any part sent to a worker and runs
/// the job in slices between frames. Does nothing for a job already finished or on the page.
fn run_on_page(shared: &Rc<RefCell<Shared>>) {
    let (job, workers) = {
        let mut s = shared.borrow_mut();
        if s.finished || s.on_page {
            return;
        }
        s.on_page = true;
        s.note = take_note();
        let workers: Vec<_> = s.parts.iter_mut().filter_map(|p| p.worker.take()).collect();
        s.parts = vec![Part::default()];
        (s.job.clone(), workers)
    };
    for w in workers {
        w.set_onmessage(None);
        w.set_onerror(None);
        w.terminate();
    }
    // An imported file is still the browser's: read it, then copy its text in, a slice per task.
    let file = shared.borrow_mut().file.take();
    match (job, file) {
        (Job::CsvImport { options, .. }, Some(file)) => {
            let sh = shared.clone();
            wasm_bindgen_futures::spawn_local(async move {
                let text = match wasm_bindgen_futures::JsFuture::from(file.text()).await.map(|v| v.dyn_into::<js_sys::JsString>()) {
                    Ok(Ok(t)) => t,
                    _ => return finish(&sh, Err("the browser could not read that file".into())),
                };
                crate::transfer::text_in_slices(&text, move |text| {
                    if !sh.borrow().finished {
                        run_job_on_page(&sh, Job::CsvImport { text, options });
                    }
                });
            });
        }
        (job, _) => run_job_on_page(shared, job),
    }
}

/// Runs `job` on the page in slices between frames (the job already moved there). In the page built
/// in pieces (`--cfg hysteron_split`) the code that runs jobs on the page is a piece of its own,
/// fetched only here (the served page has its workers); a piece that cannot be fetched ends the job
/// with an error.
fn run_job_on_page(shared: &Rc<RefCell<Shared>>, job: Job) {
    #[cfg(hysteron_split)]
    {
        let sh = shared.clone();
        leptos::task::spawn_local(async move {
            if run_on_page_piece(sh.clone(), job).await.is_err() {
                finish(&sh, Err("The code that runs studies on the page could not be loaded (no network, or the page was updated since it opened): reload the page.".into()));
            }
        });
    }
    #[cfg(not(hysteron_split))]
    let _ = run_on_page_piece(shared.clone(), job);
}

/// See [`run_job_on_page`].
#[cfg_attr(hysteron_split, leptos::wasm_split::wasm_split(run_on_page, wasm_split_path = leptos::wasm_split, fallible))]
fn run_on_page_piece(shared: Rc<RefCell<Shared>>, job: Job) -> Result<(), crate::piece::PieceMissing> {
    let shared = &shared;
    match Running::start(job) {
        Err(e) => finish(shared, Err(e.to_string())),
        Ok(r) => {
            let p = r.progress();
            {
                let mut s = shared.borrow_mut();
                s.unit = r.unit().to_string();
                s.parts[0].total = Some(p.total);
            }
            report(shared);
            let sh = shared.clone();
            crate::tick::later(move || page_slice(sh, r, 1024));
        }
    }
    Ok(())
}

/// One slice of a job on the page, then the next on a later turn of the event loop.
fn page_slice(shared: Rc<RefCell<Shared>>, mut r: Running, budget: u64) {
    if shared.borrow().finished {
        return;
    }
    let t0 = crate::tick::now_ms();
    let before = r.progress().done;
    let p = match r.step(budget) {
        Ok(p) => p,
        Err(e) => return finish(&shared, Err(e.to_string())),
    };
    let dt = (crate::tick::now_ms() - t0).max(0.05);
    let next = (((p.done - before).max(1) as f64) / dt * PAGE_SLICE_MS).clamp(1.0, 1e12) as u64;
    if p.is_done() {
        return finish(&shared, r.finish().map_err(|e| e.to_string()));
    }
    shared.borrow_mut().parts[0].done = p.done;
    report(&shared);
    crate::tick::later(move || page_slice(shared, r, next));
}

/// A study that follows changing inputs on the compute workers (see [`follow`]).
#[derive(Clone, Copy)]
pub struct Followed {
    /// The latest job's output; `None` while it runs (or after Cancel).
    pub result: leptos::prelude::RwSignal<Option<Result<JobOutput, String>>>,
    /// Progress of the running job, once it has run for [`PROGRESS_QUIET_MS`] (no flicker for the
    /// usual short runs; see [`report`]).
    pub status: leptos::prelude::RwSignal<Option<JobStatus>>,
    /// Stops the running job.
    pub cancel: leptos::prelude::Callback<()>,
}

/// Runs `job` on the compute workers each time it changes (compared by value): the running one is
/// cancelled and the new one started; `None` runs nothing. `answers` as in [`start`].
pub fn follow(job: leptos::prelude::Memo<Option<Job>>, answers: Answers) -> Followed {
    use leptos::prelude::*;
    let result = RwSignal::new(None::<Result<JobOutput, String>>);
    let status = RwSignal::new(None::<JobStatus>);
    let running = StoredValue::new_local(None::<JobHandle>);
    let stop = move || {
        if let Some(h) = running.try_update_value(|r| r.take()).flatten() {
            h.cancel();
        }
        status.set(None);
    };
    Effect::new(move |_| {
        let next = job.get();
        stop();
        result.set(None);
        let Some(next) = next else { return };
        let handle = start(
            next,
            answers,
            move |st| status.set(Some(st)),
            move |out| {
                running.set_value(None);
                status.set(None);
                result.set(Some(out));
            },
        );
        if !handle.is_finished() {
            running.set_value(Some(handle));
        }
    });
    Followed { result, status, cancel: Callback::new(move |_| stop()) }
}
