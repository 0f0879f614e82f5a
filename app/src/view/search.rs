//! The standard-value search of the parts section, run in slices: the work bound is shown before
//! it starts, then a progress bar with the time still to go and a Cancel button; the result lists
//! each alternative with the current it draws and the budget it had to meet. All arithmetic is
//! `core`'s (`overview::standard_values_job`, `search::SearchJob`); this file asks and shows.

use super::state::{study_inputs, Notebook, Study};
use crate::storage::{Kept, KeptSearch};
use crate::tick::{later, now_ms};
use hysteron_core::analysis::Targets;
use hysteron_core::notation::{format_with_unit, Unit};
use hysteron_core::overview::{search_settings, standard_values_job, Synthesis};
use hysteron_core::record::DesignRecord;
use hysteron_core::search::{apply, Progress, SearchJob, SearchReport, Workload};
use hysteron_core::topology::Topology;
use leptos::prelude::*;

/// Evaluations of the first slice, whose time sets the estimate and the slice size.
const SAMPLE_EVALUATIONS: u64 = 20;
/// Wanted length of one slice, milliseconds (the page answers input between slices).
const SLICE_MS: f64 = 30.0;

fn ohms(v: f64) -> String {
    format_with_unit(v, 4, Unit::Ohm)
}

fn amps(v: f64) -> String {
    format_with_unit(v, 3, Unit::Ampere)
}

fn seconds(s: f64) -> String {
    if s < 1.0 {
        "under a second".into()
    } else if s < 120.0 {
        format!("about {s:.0} s")
    } else {
        format!("about {:.0} min", s / 60.0)
    }
}

struct Running {
    job: SearchJob<Topology>,
    generation: u64,
    /// Evaluations per slice, set from the sample's speed.
    slice: u64,
}

/// The search's state, shared between the parts section (which starts it) and [`SearchResults`].
#[derive(Clone, Copy)]
pub struct SearchState {
    job: StoredValue<Option<Running>>,
    generation: RwSignal<u64>,
    workload: RwSignal<Option<Workload>>,
    budget_a: RwSignal<Option<f64>>,
    progress: RwSignal<Option<Progress>>,
    remaining_s: RwSignal<Option<f64>>,
    started_ms: RwSignal<f64>,
    elapsed_ms: RwSignal<Option<f64>>,
    /// The error of the last start (invalid targets or settings); a result found is kept with the
    /// design instead ([`crate::storage::Studies::search`]).
    found: RwSignal<Option<Result<SearchReport, String>>>,
    /// The design the running search belongs to and its inputs ([`study_inputs`]) when it started.
    keep: StoredValue<Option<(String, String)>>,
    nb: Notebook,
}

impl SearchState {
    /// A state with nothing searched.
    pub fn new() -> Self {
        SearchState {
            job: StoredValue::new(None),
            generation: RwSignal::new(0),
            workload: RwSignal::new(None),
            budget_a: RwSignal::new(None),
            progress: RwSignal::new(None),
            remaining_s: RwSignal::new(None),
            started_ms: RwSignal::new(0.0),
            elapsed_ms: RwSignal::new(None),
            found: RwSignal::new(None),
            keep: StoredValue::new(None),
            nb: expect_context::<Notebook>(),
        }
    }

    /// Stops a running search and forgets its error (another design opened). A result found
    /// stays kept with its design.
    pub fn reset(self) {
        self.generation.update(|g| *g += 1);
        self.job.set_value(None);
        self.workload.set(None);
        self.progress.set(None);
        self.remaining_s.set(None);
        self.elapsed_ms.set(None);
        self.found.set(None);
    }

    /// Starts a search for `targets` from the synthesised design (or the record's own): the
    /// settings are checked and the work bound shown at once; invalid targets show only the error.
    pub fn start(self, record: &DesignRecord, targets: &Targets, synthesised: Option<&Synthesis>) {
        self.reset();
        self.budget_a.set(search_settings(record, targets).current_budget_a);
        self.keep.set_value(self.nb.current.get_untracked().map(|id| (id, study_inputs(Study::Search, record))));
        match standard_values_job(record, targets, synthesised) {
            Err(e) => self.found.set(Some(Err(e.to_string()))),
            Ok(job) => {
                let generation = self.generation.get_untracked();
                self.workload.set(Some(job.workload()));
                self.progress.set(Some(job.progress()));
                self.job.set_value(Some(Running { job, generation, slice: SAMPLE_EVALUATIONS }));
                self.started_ms.set(now_ms());
                later(move || step(self, generation));
            }
        }
    }

    fn cancel(self) {
        self.generation.update(|g| *g += 1);
        self.job.set_value(None);
        self.progress.set(None);
        self.remaining_s.set(None);
    }
}

impl Default for SearchState {
    fn default() -> Self {
        Self::new()
    }
}

/// One slice of the running search, then the next one on a later turn of the event loop.
fn step(st: SearchState, generation: u64) {
    if st.generation.get_untracked() != generation {
        return;
    }
    let t0 = now_ms();
    let outcome = st.job.try_update_value(|run| {
        let run = run.as_mut()?;
        if run.generation != generation {
            return None;
        }
        let before = run.job.progress().evaluations;
        let p = run.job.step(run.slice);
        let ms = (now_ms() - t0).max(0.01);
        // Size the next slice to SLICE_MS from this one's speed.
        let per_eval = ms / (p.evaluations.saturating_sub(before).max(1) as f64);
        run.slice = ((SLICE_MS / per_eval) as u64).clamp(1, 1_000_000);
        Some((p, p.finished.then(|| run.job.finish())))
    });
    let Some(Some((p, done))) = outcome else { return };
    let elapsed_s = (now_ms() - st.started_ms.get_untracked()) / 1e3;
    st.progress.set(Some(p));
    st.remaining_s.set(p.remaining_s(elapsed_s));
    match done {
        Some(report) => {
            let elapsed_ms = elapsed_s * 1e3;
            st.elapsed_ms.set(Some(elapsed_ms));
            st.progress.set(None);
            st.job.set_value(None);
            // Kept with the design the search started on (it survives a reload and a change of
            // the targets, then marked out of date).
            let budget_a = st.budget_a.get_untracked();
            match st.keep.try_update_value(|k| k.take()).flatten() {
                Some((id, inputs)) => st.nb.keep_study(&id, move |s| {
                    s.search = Some(Kept { inputs, result: KeptSearch { report, budget_a }, elapsed_ms })
                }),
                None => st.found.set(Some(Ok(report))),
            }
        }
        None => later(move || step(st, generation)),
    }
}

/// The work bound, the progress while the search runs, and the alternatives found.
#[component]
pub fn SearchResults(state: SearchState) -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let st = state;
    let bound = move || {
        st.workload.get().map(|w| {
            view! {
                <p class="note" id="search-workload" data-evaluations=w.max_evaluations.to_string()>
                    {format!(
                        "{} resistors, {} values each: {} combinations, at most {} evaluations",
                        w.resistors, w.values_per_resistor, w.combinations, w.max_evaluations
                    )}
                    {move || st.remaining_s.get().filter(|_| st.progress.get().is_some()).map(|s| format!("; {} to go", seconds(s)))}
                </p>
            }
        })
    };
    let running = move || {
        st.progress.get().map(|p| {
            view! {
                <div class="row" id="search-running">
                    <progress id="search-progress" max="1" value=p.fraction().to_string()></progress>
                    <span class="note">{format!("{} evaluations{}", p.evaluations, if p.unpruned_pass { " (full scan: these thresholds are not bilinear)" } else { "" })}</span>
                    <button id="search-cancel" class="quiet" on:click=move |_| st.cancel()>"Cancel"</button>
                </div>
            }
        })
    };
    // The search kept with the open design, and whether its inputs are still the design's.
    let kept = Memo::new(move |_| nb.study(Study::Search, |s| &s.search));
    let error = move || st.found.get().and_then(|r| r.err()).map(|e| view! { <p class="error" id="search-error" role="alert">{e}</p> });
    let results = move || {
        // An error hides every list; a result not kept (no stored design) shows as found.
        let shown = match st.found.get() {
            Some(Err(_)) => None,
            Some(Ok(rep)) => Some((rep, st.budget_a.get_untracked(), st.elapsed_ms.get_untracked().unwrap_or(0.0), true)),
            None => kept.get().map(|k| (k.result.report, k.result.budget_a, k.elapsed_ms, k.current)),
        };
        shown.map(|(rep, budget, elapsed_ms, current)| {
            {
                let head: Vec<String> = rep
                    .candidates
                    .first()
                    .map(|c| c.parts.iter().map(|p| p.designator.clone().unwrap_or_else(|| p.id.clone())).collect())
                    .unwrap_or_default();
                let budget_note = match budget {
                    Some(b) => format!("; only sets drawing at most {} listed", amps(b)),
                    None => String::new(),
                };
                // The resistor solved for, by its designator on screen (R1…), not its record name.
                let solved = rep
                    .candidates
                    .first()
                    .and_then(|c| c.parts.iter().find(|p| p.id == rep.solved_id))
                    .and_then(|p| p.designator.clone())
                    .unwrap_or_else(|| "the last resistor".to_string());
                let empty = rep.candidates.is_empty().then(|| {
                    view! { <p class="error" id="search-none" role="alert">"no combination in this range meets the current budget: raise the budget or the largest resistor"</p> }
                });
                view! {
                    {(!current).then(|| view! {
                        <p class="stale" id="search-stale" role="status"><strong>"Out of date — search again."</strong>
                            " The targets, the search settings or the device changed since this search; the sets below meet the targets as they were."</p>
                    })}
                    <div class="search-result" class:out-of-date=!current>
                    <p class="note" id="search-summary" data-current=current.to_string()>
                        {format!("{} combinations of {} checked; {solved} solved for directly{} ({elapsed_ms:.1} ms)", rep.combinations, rep.series, budget_note)}
                    </p>
                    {empty}
                    <table class="grid" id="alternatives">
                        <thead><tr><th>"#"</th>{head.into_iter().map(|h| view! { <th>{h}</th> }).collect_view()}
                            <th>"VT+"</th><th>"VT−"</th><th>"worst error"</th><th>"current"</th><th></th></tr></thead>
                        <tbody>
                            {rep.candidates.into_iter().enumerate().map(|(i, c)| {
                                let cand = c.clone();
                                let pick = move |_| {
                                    let cand = cand.clone();
                                    nb.edit(move |r| if let Ok(n) = apply(&r.circuit, &cand) { r.circuit = n; });
                                };
                                let current = c.quiescent_current_a.map_or_else(|| "—".to_string(), amps);
                                let current_value = c.quiescent_current_a.map(|a| a.to_string()).unwrap_or_default();
                                view! {
                                    <tr class="alternative">
                                        <td>{i + 1}</td>
                                        {c.parts.iter().map(|p| view! { <td>{ohms(p.value_ohm)}</td> }).collect_view()}
                                        <td>{format!("{:.4} V", c.vt_upper_v)}</td>
                                        <td>{format!("{:.4} V", c.vt_lower_v)}</td>
                                        <td>{format!("{:.3} %", c.worst_error_rel * 100.0)}</td>
                                        <td class="alternative-current" data-value=current_value>{current}</td>
                                        <td><button class="quiet small use-alternative" on:click=pick>"Use"</button></td>
                                    </tr>
                                }
                            }).collect_view()}
                        </tbody>
                    </table>
                    </div>
                }
                .into_any()
            }
        })
    };
    view! { {bound} {running} {error} {results} }
}
