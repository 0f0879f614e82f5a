//! Browser end-to-end: the page's state as a user meets it (issue 12, items 7 and 8 and the
//! notebook's wording) — a share link opened in a fresh browser prints the shared design and
//! stores nothing until it is kept; a Monte Carlo result survives an edit of the signal test and a
//! reload, and says "out of date" when its own inputs change; a reload reopens the design and the
//! place last shown (or the design edited last); undo and redo buttons; unique names on import;
//! topology names as people say them in the notebook list; new designs whose targets agree with
//! what the target fields show.

use hysteron_core::catalog;
use hysteron_tests::browser::{self, Session};

async fn stored_count(s: &Session) -> u64 {
    s.js("return Object.keys(localStorage).filter(k => k.startsWith('hysteron/design/')).length").await.as_u64().unwrap_or(0)
}

async fn list_names(s: &Session) -> Vec<String> {
    let v = s.js("return [...document.querySelectorAll('#design-list .design-name')].map(e => e.textContent)").await;
    v.as_array().map(|a| a.iter().filter_map(|x| x.as_str().map(String::from)).collect()).unwrap_or_default()
}

async fn open_id(s: &Session) -> String {
    s.js("const li = document.querySelector('#design-list li.open'); return li ? li.dataset.id : ''").await.as_str().unwrap_or("").to_string()
}

fn pdf_text(pdf: &[u8], name: &str) -> String {
    let path = std::env::temp_dir().join(format!("hysteron-state-{}-{name}.pdf", std::process::id()));
    std::fs::write(&path, pdf).unwrap();
    let out = std::process::Command::new("pdftotext").arg(&path).arg("-").output().expect("pdftotext (poppler-utils) runs");
    let _ = std::fs::remove_file(&path);
    String::from_utf8_lossy(&out.stdout).to_string()
}

#[tokio::test(flavor = "multi_thread")]
async fn share_link_in_a_fresh_browser_prints_the_shared_design_and_stores_nothing_until_kept() {
    let s = browser::start().await;
    let demo = catalog::demos().into_iter().find(|d| d.key == "cabin-battery").expect("demo");
    s.add_starter("demo:cabin-battery").await;
    let expected_up = s.number("#vt-upper").await;
    s.wait_for("#make-link").await.click().await.unwrap();
    let link = s.wait_for("#share-link").await.prop("value").await.unwrap().unwrap_or_default();
    assert!(link.contains("#h1."), "not a Hysteron link: {link}");

    // A fresh browser: nothing stored, nothing remembered by the tab; then the link is opened.
    s.js("localStorage.clear(); sessionStorage.clear(); return 1;").await;
    s.client.goto(&link).await.unwrap();
    s.client.refresh().await.unwrap();
    s.wait_for("#shared-design").await;
    let up = s.number("#shared-vt-upper").await;
    assert!((up - expected_up).abs() < 1e-12, "shared design shows VT+ {up}, expected {expected_up}");
    assert_eq!(stored_count(&s).await, 0, "opening a link stored a design");
    assert!(list_names(&s).await.is_empty(), "opening a link added a notebook entry: {:?}", list_names(&s).await);
    assert!(s.wait_for("#keep-shared").await.text().await.unwrap().contains("Keep in notebook"));

    // Printing prints the shared design, not an untitled default.
    s.js("window.dispatchEvent(new Event('beforeprint')); return 1;").await;
    // The sheet is hidden on screen (print only): read its text, not its visible text.
    let name = serde_json::to_string(&demo.record().name).unwrap();
    s.wait_js("the sheet to name the shared design", &format!("return document.querySelector('#sheet-name').textContent === {name}")).await;
    let sheet_up = s
        .wait_js("the sheet to show VT+", "const e = document.querySelector('#sheet-vt-upper'); return !!e && e.textContent.endsWith(' V') && e.textContent")
        .await;
    assert_eq!(sheet_up.as_str(), Some(format!("{expected_up:.3} V").as_str()), "the sheet shows another design's VT+");
    let cfg = fantoccini::wd::PrintConfiguration::builder().build().unwrap();
    let text = pdf_text(&s.client.print(cfg).await.expect("print to PDF"), "shared");
    assert!(text.contains(&demo.record().name), "the printed sheet does not name the shared design:\n{text}");
    assert!(!text.contains("Untitled design"), "the printed sheet is an untitled default:\n{text}");
    assert_eq!(stored_count(&s).await, 0, "printing stored a design");

    // Keeping it is the one step that stores it.
    s.wait_for("#keep-shared").await.click().await.unwrap();
    s.wait_js("the kept design to be stored", "return Object.keys(localStorage).filter(k => k.startsWith('hysteron/design/')).length === 1").await;
    assert_eq!(list_names(&s).await, vec![demo.record().name]);
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn monte_carlo_survives_a_signal_edit_and_a_reload_and_says_when_it_is_out_of_date() {
    let s = browser::start().await;
    s.add_starter("demo:lathe-tachometer").await;
    s.type_into("#mc-trials", "2000").await;
    s.wait_stored("(r.tolerance || {}).monte_carlo && r.tolerance.monte_carlo.trials === 2000").await;
    s.wait_for("#mc-run").await.click().await.unwrap();
    let summary = s.wait_text("#mc-summary", "the Monte Carlo summary", |t| t.starts_with("2000 trials")).await;

    // An edit in the signal test leaves the Monte Carlo result as it is, and current.
    if s.js("return !!document.querySelector('#signal-add')").await.as_bool() == Some(true) {
        s.wait_for("#signal-add").await.click().await.unwrap();
    }
    s.type_into("#sig-rate", "20k").await;
    s.wait_stored("r.signal && r.signal.sample_rate_hz === 20000").await;
    assert_eq!(s.text("#mc-summary").await, summary, "a signal edit changed the Monte Carlo result");
    let stale = s.js("return !!document.querySelector('#mc-stale')").await;
    assert_eq!(stale.as_bool(), Some(false), "a signal edit marked the Monte Carlo result out of date");

    // A reload keeps it, with the same design open.
    let id = open_id(&s).await;
    s.reload().await;
    assert_eq!(open_id(&s).await, id, "the reload opened another design");
    let after = s.wait_text("#mc-summary", "the Monte Carlo summary after the reload", |t| !t.is_empty()).await;
    assert_eq!(after, summary, "the reload changed or lost the Monte Carlo result");
    assert_eq!(s.js("return !!document.querySelector('#mc-stale')").await.as_bool(), Some(false));
    assert_eq!(s.js("return !!document.querySelector('#mc-sampler')").await.as_bool(), Some(false), "a fresh run was called drawn by an earlier method");

    // A result kept before results named their normal sampler (stored without the field) stays
    // shown and current, with a note that a re-run with its seed draws other boards.
    let note = s.forget_sampler_and_reload(&format!("'hysteron/design/{id}'"), "monte_carlo", "#mc-sampler").await;
    assert!(note.contains("earlier version") && note.contains("same seed"), "{note}");
    assert_eq!(s.text("#mc-summary").await, summary, "the older result is not shown as it was kept");
    assert_eq!(s.js("return !!document.querySelector('#mc-stale')").await.as_bool(), Some(false));

    // An edit to its own inputs (the resistor tolerance) marks it out of date but keeps it shown.
    s.type_into("#tol-resistor", "5").await;
    s.wait_stored("r.tolerance.resistor_tolerance_pct === 5").await;
    let note = s.text("#mc-stale").await;
    assert!(note.contains("Out of date — run again"), "no out-of-date note: {note}");
    assert_eq!(s.text("#mc-summary").await, summary, "the old result should stay visible, marked out of date");
    // Running again makes it current.
    s.wait_for("#mc-run").await.click().await.unwrap();
    s.wait_js("the new run to replace the old one", "return !document.querySelector('#mc-stale') && !document.querySelector('#mc-sampler') && !!document.querySelector('#mc-summary')").await;
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn reload_reopens_the_shown_design_at_its_place_or_else_the_one_edited_last() {
    let s = browser::start().await;
    s.add_starter("demo:lathe-tachometer").await;
    let lathe = open_id(&s).await;
    s.add_starter("demo:cabin-battery").await;
    let cabin = open_id(&s).await;
    assert_ne!(lathe, cabin);

    // Edit the lathe design (the one edited last), then open the cabin design without editing it.
    s.js(&format!("document.querySelector('#design-list li[data-id=\"{lathe}\"] .design-pick').click(); return 1;")).await;
    s.wait_js("the lathe design to open", &format!("const li = document.querySelector('#design-list li.open'); return !!li && li.dataset.id === '{lathe}'")).await;
    s.type_into("#design-name", "Lathe, edited last").await;
    s.wait_stored("r.name === 'Lathe, edited last'").await;
    s.js(&format!("document.querySelector('#design-list li[data-id=\"{cabin}\"] .design-pick').click(); return 1;")).await;
    s.wait_js("the cabin design to open", &format!("const li = document.querySelector('#design-list li.open'); return !!li && li.dataset.id === '{cabin}'")).await;

    // Scroll down: a reload comes back to the design shown and to the same place.
    let target = s.js("const y = Math.min(900, document.documentElement.scrollHeight - window.innerHeight); window.scrollTo(0, y); return y;").await.as_f64().unwrap_or(0.0);
    assert!(target > 200.0, "the page is too short to scroll ({target} px)");
    s.wait_js("the scroll position to be remembered", &format!("const v = JSON.parse(sessionStorage.getItem('hysteron/view') || 'null'); return !!v && Math.abs(v.scroll_y - {target}) < 2")).await;
    s.reload().await;
    assert_eq!(open_id(&s).await, cabin, "the reload did not reopen the design shown");
    s.wait_js("the page to scroll back to where it was", &format!("return Math.abs(window.scrollY - {target}) < 2")).await;

    // A new visit (a new tab: nothing remembered) opens the design edited last, not the first.
    let tab = s.client.new_window(true).await.unwrap();
    s.client.switch_to_window(tab.handle).await.unwrap();
    s.client.goto(&s.base).await.unwrap();
    s.wait_for("#design-list li.open").await;
    assert_eq!(open_id(&s).await, lathe, "a new visit did not open the design edited last");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn undo_and_redo_buttons_step_through_edits() {
    let s = browser::start().await;
    s.add_starter("demo:lathe-tachometer").await;
    let name = catalog::demos().into_iter().find(|d| d.key == "lathe-tachometer").unwrap().record().name;
    let disabled = |css: &'static str| format!("return document.querySelector('{css}').disabled");
    assert_eq!(s.js(&disabled("#undo-edit")).await.as_bool(), Some(true), "undo offered before any edit");
    s.type_into("#design-name", "Spindle watch").await;
    s.wait_stored("r.name === 'Spindle watch'").await;
    s.wait_js("undo to be offered", "return !document.querySelector('#undo-edit').disabled").await;
    s.wait_for("#undo-edit").await.click().await.unwrap();
    s.wait_stored(&format!("r.name === {}", serde_json::to_string(&name).unwrap())).await;
    assert_eq!(s.js("return document.querySelector('#design-name').value").await.as_str(), Some(name.as_str()));
    s.wait_js("redo to be offered", "return !document.querySelector('#redo-edit').disabled").await;
    s.wait_for("#redo-edit").await.click().await.unwrap();
    s.wait_stored("r.name === 'Spindle watch'").await;
    assert_eq!(s.js(&disabled("#redo-edit")).await.as_bool(), Some(true), "redo still offered with nothing undone");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn an_imported_design_never_takes_a_name_that_exists() {
    let dir = std::env::temp_dir().join(format!("hysteron-import-names-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let record = catalog::demos().into_iter().find(|d| d.key == "cabin-battery").unwrap().record();
    let file = dir.join("cabin.json");
    std::fs::write(&file, record.to_json()).unwrap();

    let s = browser::start().await;
    s.add_starter("demo:cabin-battery").await;
    for expected in [format!("{} (2)", record.name), format!("{} (3)", record.name)] {
        s.wait_for("#import-json").await.send_keys(file.to_str().unwrap()).await.unwrap();
        s.wait_stored(&format!("r.name === {}", serde_json::to_string(&expected).unwrap())).await;
    }
    let names = list_names(&s).await;
    let mut unique = names.clone();
    unique.sort();
    unique.dedup();
    assert_eq!(unique.len(), names.len(), "two designs share a name: {names:?}");
    let _ = std::fs::remove_dir_all(&dir);
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn notebook_list_and_new_designs_speak_plainly() {
    let s = browser::start().await;
    // A new design's target fields agree with the design: no "no targets" note beside numbers.
    s.wait_for("#new-design").await.click().await.unwrap();
    s.wait_js("the new design to open", "return !!document.querySelector('#vt-upper') && document.querySelector('#vt-upper').dataset.value !== ''").await;
    let body = s.text("#purpose").await;
    assert!(!body.contains("no targets yet"), "a new design says it has no targets while showing some: {body}");
    for d in catalog::demos() {
        s.add_starter(&format!("demo:{}", d.key)).await;
        let body = s.text("#purpose").await;
        assert!(!body.contains("no targets yet"), "{}: says it has no targets while showing some", d.key);
    }
    for t in catalog::templates() {
        s.add_starter(&format!("topology:{}", t.key)).await;
    }
    let meta = s.js("return [...document.querySelectorAll('#design-list .design-meta')].map(e => e.textContent).join(' | ')").await;
    let meta = meta.as_str().unwrap_or_default().to_string();
    for t in catalog::templates() {
        let topology = t.record().circuit;
        assert!(meta.contains(topology.title()), "the list does not name {} as {:?}: {meta}", topology.name(), topology.title());
        if topology.name().contains('_') {
            assert!(!meta.contains(topology.name()), "the list shows the internal name {}: {meta}", topology.name());
        }
    }
    s.close().await;
}
