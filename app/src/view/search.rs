//! The standard-value search of the parts section, on the compute workers (`crate::jobs`, split
//! over the pool by ranges of the enumeration: `core::jobs::split` on `Job::Search`): the work
//! bound is shown before it starts, then a progress bar with the time still to go and a Cancel
//! button; the result lists each alternative with the current it draws and the budget it had to
//! meet. All arithmetic is `core`'s (`jobs::search_job`, `search::SearchJob`); this file asks and shows.

use super::state::{study_inputs, Notebook, Study};
use crate::jobs::{JobHandle, JobStatus};
use crate::storage::{Kept, KeptSearch};
use crate::tick::now_ms;
use hysteron_core::analysis::Targets;
use hysteron_core::jobs::JobOutput;
use hysteron_core::notation::{format_with_unit, Unit};
use hysteron_core::overview::{search_settings, Synthesis};
use hysteron_core::record::DesignRecord;
use hysteron_core::search::{apply, SearchReport, Workload};
use leptos::prelude::*;

fn ohms(v: f64) -> String {
    format_with_unit(v, 4, Unit::Ohm)
}

fn amps(v: f64) -> String {
    format_with_unit(v, 3, Unit::Ampere)
}

/// The search's state, shared between the parts section (which starts it) and [`SearchResults`].
#[derive(Clone, Copy)]
pub struct SearchState {
    job: StoredValue<Option<JobHandle>, leptos::prelude::LocalStorage>,
    workload: RwSignal<Option<Workload>>,
    budget_a: RwSignal<Option<f64>>,
    status: RwSignal<Option<JobStatus>>,
    elapsed_ms: RwSignal<Option<f64>>,
    /// The error of the last start (invalid targets or settings, or the run failed); a result
    /// found is kept with the design instead ([`crate::storage::Studies::search`]).
    found: RwSignal<Option<Result<SearchReport, String>>>,
    nb: Notebook,
}

impl SearchState {
    /// A state with nothing searched.
    pub fn new() -> Self {
        SearchState {
            job: StoredValue::new_local(None),
            workload: RwSignal::new(None),
            budget_a: RwSignal::new(None),
            status: RwSignal::new(None),
            elapsed_ms: RwSignal::new(None),
            found: RwSignal::new(None),
            nb: expect_context::<Notebook>(),
        }
    }

    /// Stops a running search and forgets its error (another design opened). A result found
    /// stays kept with its design.
    pub fn reset(self) {
        self.cancel();
        self.workload.set(None);
        self.elapsed_ms.set(None);
        self.found.set(None);
    }

    /// Starts a search for `targets` from the synthesised design (or the record's own): the
    /// settings are checked and the work bound shown at once; invalid targets show only the error.
    pub fn start(self, record: &DesignRecord, targets: &Targets, synthesised: Option<&Synthesis>) {
        self.reset();
        self.budget_a.set(search_settings(record, targets).current_budget_a);
        let keep = self.nb.current.get_untracked().map(|id| (id, study_inputs(Study::Search, record)));
        let (job, workload) = match hysteron_core::jobs::search_job(record, targets, synthesised) {
            Err(e) => return self.found.set(Some(Err(e.to_string()))),
            Ok(j) => j,
        };
        self.workload.set(Some(workload));
        let t0 = now_ms();
        let handle = crate::jobs::start(
            job,
            hysteron_core::job_answers::Answers::SEARCH,
            move |status| self.status.set(Some(status)),
            move |out| {
                let elapsed_ms = now_ms() - t0;
                self.job.set_value(None);
                self.status.set(None);
                self.elapsed_ms.set(Some(elapsed_ms));
                let budget_a = self.budget_a.get_untracked();
                match out {
                    // Kept with the design the search started on (it survives a reload and a
                    // change of the targets, then marked out of date).
                    Ok(JobOutput::Search(report)) => match keep {
                        Some((id, inputs)) => self.nb.keep_study(&id, move |s| {
                            s.search = Some(Kept { inputs, result: crate::unread::Unread::new(KeptSearch { report, budget_a }), elapsed_ms })
                        }),
                        None => self.found.set(Some(Ok(report))),
                    },
                    Ok(_) => self.found.set(Some(Err("the worker returned another study's result".into()))),
                    Err(e) => self.found.set(Some(Err(e))),
                }
            },
        );
        if !handle.is_finished() {
            self.job.set_value(Some(handle));
        }
    }

    fn cancel(self) {
        if let Some(h) = self.job.try_update_value(|j| j.take()).flatten() {
            h.cancel();
        }
        self.status.set(None);
    }
}

impl Default for SearchState {
    fn default() -> Self {
        Self::new()
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
                </p>
            }
        })
    };
    let running = move || {
        st.status.get().is_some().then(|| {
            view! {
                <div class="row" id="search-running">
                    <super::progress::JobProgress id="search" status=st.status.into() on_cancel=Callback::new(move |_| st.cancel()) />
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
