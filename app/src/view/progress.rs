//! The progress bar and Cancel button of a long study (`crate::jobs`): how much is done, in the
//! study's own units, an estimate of the time left from the rate so far, and where it runs.
//! Reused by every section that starts a job; ids are `<id>-progress`, `<id>-status`, `<id>-cancel`,
//! and `workers-note` for the one note that studies run on the page (workers refused).

use crate::jobs::JobStatus;
use leptos::prelude::*;

fn count(n: u64) -> String {
    let s = n.to_string();
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

fn describe(s: &JobStatus) -> String {
    let place = match s.workers {
        0 => "on this page".to_string(),
        1 => "in the background".to_string(),
        n => format!("on {n} background workers"),
    };
    if s.total == 0 {
        return format!("starting {place}…");
    }
    let left = match s.remaining_ms() {
        Some(ms) if ms >= 1000.0 => format!(", about {:.0} s left", ms / 1000.0),
        Some(_) => ", under a second left".to_string(),
        None => String::new(),
    };
    format!("{} of {} {} {place}{left}", count(s.done), count(s.total), s.unit)
}

/// Progress of a running study with its Cancel button; shows nothing while `status` is `None`.
#[component]
pub fn JobProgress(
    /// Prefix of the element ids.
    id: &'static str,
    /// The job's status while it runs.
    status: Signal<Option<JobStatus>>,
    /// Called when Cancel is pressed.
    on_cancel: Callback<()>,
) -> impl IntoView {
    move || {
        status.get().map(|s| {
            view! {
                <span class="job-progress" role="status">
                    <progress id=format!("{id}-progress") max="1" value=s.fraction().to_string()></progress>
                    // Cancel before the words: it stays where it is while the counts and the time
                    // left change their length (after them it moved under the pointer).
                    <button id=format!("{id}-cancel") class="quiet" on:click=move |_| on_cancel.run(())>"Cancel"</button>
                    <span class="note" id=format!("{id}-status") data-done=s.done.to_string() data-total=s.total.to_string()>{describe(&s)}</span>
                    {s.note.map(|n| view! { <span class="note" id="workers-note">{n}</span> })}
                </span>
            }
        })
    }
}
