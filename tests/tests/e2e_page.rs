//! Browser end-to-end: the rest of the page as an engineer meets it (issue 12) — the oscillator's
//! and debouncer's R and C on the schematic; signal-test and search results that survive a reload
//! and say when an edit made them out of date (the search is never cleared by new targets); one
//! warning per node; the transistor pair's temperature laws (XTI, EG, XTB) as fields. Every value
//! is typed with real key events ([`Session::type_into`]).

use hysteron_tests::browser::{self, Session};

/// The schematic image's SVG text (the `<img>` holds it as a `data:` URL).
async fn schematic_svg(s: &Session) -> String {
    let v = s
        .wait_js(
            "the schematic to be drawn",
            "const i = document.querySelector('#schematic'); return !!i && i.src.startsWith('data:image/svg+xml') && decodeURIComponent(i.src.split(',').slice(1).join(','));",
        )
        .await;
    v.as_str().unwrap_or_default().to_string()
}

/// The oscillator's and debouncer's lines of the part list: designator and value text.
async fn application_lines(s: &Session) -> Vec<(String, String)> {
    s.wait_for("#bom").await;
    let v = s.js("return [...document.querySelectorAll('#bom tr.bom-app-line')].map(r => [r.dataset.designator, r.children[1].textContent]);").await;
    serde_json::from_value(v).unwrap_or_default()
}

#[tokio::test(flavor = "multi_thread")]
async fn oscillator_and_debouncer_parts_are_on_the_schematic_in_both_symbol_styles() {
    let s = browser::start().await;
    for (demo, parts) in [("beehive-clock", 2), ("rain-gauge", 3)] {
        s.add_starter(&format!("demo:{demo}")).await;
        let lines = application_lines(&s).await;
        assert_eq!(lines.len(), parts, "{demo}: part list lines {lines:?}");
        for style in ["iec60617", "ieee315"] {
            s.wait_for("#symbol-style").await.select_by_value(style).await.expect("choose the symbol style");
            let svg = browser::wait_until(&format!("{demo}: the {style} schematic"), browser::WAIT, || async {
                let svg = schematic_svg(&s).await;
                let want = if style == "ieee315" { "IEEE 315" } else { "IEC 60617" };
                if svg.contains(want) { Ok(svg) } else { Err(svg.chars().take(200).collect()) }
            })
            .await;
            for (designator, value) in &lines {
                assert!(svg.contains(&format!(">{designator}</text>")), "{demo} ({style}): {designator} not on the schematic");
                // Capacitors carry the part list's own value text; resistors their style's form.
                if designator.starts_with('C') {
                    assert!(svg.contains(&format!(">{value}</text>")), "{demo} ({style}): {designator} = {value} not on the schematic");
                }
            }
        }
    }
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn signal_test_result_survives_a_reload_and_goes_out_of_date_only_with_its_inputs() {
    let s = browser::start().await;
    s.add_starter("demo:lathe-tachometer").await;
    if s.js("return !!document.querySelector('#signal-add')").await.as_bool() == Some(true) {
        s.wait_for("#signal-add").await.click().await.unwrap();
    }
    s.wait_for("#signal-run").await.click().await.unwrap();
    s.wait_for("#signal-results").await;
    let edges = s.number("#edges-design").await;
    let table = s.text("#signal-results").await;
    s.wait_js(
        "the signal report to be stored with the design",
        "const li = document.querySelector('#design-list li.open'); const v = JSON.parse(localStorage.getItem('hysteron/design/' + li.dataset.id)); \
         return !!v.studies && !!v.studies.signal && v.studies.signal.result.samples > 0;",
    )
    .await;
    // The stored report holds no samples: it is small.
    let size = s
        .js("const li = document.querySelector('#design-list li.open'); return JSON.stringify(JSON.parse(localStorage.getItem('hysteron/design/' + li.dataset.id)).studies.signal).length;")
        .await
        .as_u64()
        .unwrap_or(u64::MAX);
    assert!(size < 20_000, "the kept signal report is {size} characters: samples were stored");

    s.reload().await;
    assert_eq!(s.text("#signal-results").await, table, "the reload changed or lost the signal test result");
    assert_eq!(s.number("#edges-design").await, edges);
    assert_eq!(s.js("return !!document.querySelector('#signal-stale')").await.as_bool(), Some(false));
    assert!(s.text("#signal-no-waveforms").await.contains("run the test again"));
    assert_eq!(s.js("return !!document.querySelector('#signal-sampler')").await.as_bool(), Some(false), "a fresh report was called drawn by an earlier method");

    // A report kept before reports named their normal sampler (stored without the field) stays
    // shown and current, with a note that a re-run with its seed draws other noise.
    let note = s
        .forget_sampler_and_reload("'hysteron/design/' + document.querySelector('#design-list li.open').dataset.id", "signal", "#signal-sampler")
        .await;
    assert!(note.contains("earlier version") && note.contains("same seed"), "{note}");
    assert_eq!(s.text("#signal-results").await, table, "the older report is not shown as it was kept");
    assert_eq!(s.js("return !!document.querySelector('#signal-stale')").await.as_bool(), Some(false));

    // An edit elsewhere (the resistor tolerance) leaves it current.
    s.type_into("#tol-resistor", "5").await;
    s.wait_stored("r.tolerance.resistor_tolerance_pct === 5").await;
    assert_eq!(s.js("return !!document.querySelector('#signal-stale')").await.as_bool(), Some(false), "a tolerance edit made the signal test stale");

    // An edit to its own inputs (the sample rate) marks it out of date and keeps it shown.
    let rate = s.js(&format!("{} return r.signal.definition ? r.signal.definition.sample_rate_hz : r.signal.sample_rate_hz;", open_record_js())).await;
    let new_rate = if rate.as_f64() == Some(25_000.0) { "30k" } else { "25k" };
    s.type_into("#sig-rate", new_rate).await;
    s.wait_for("#signal-stale").await;
    let note = s.text("#signal-stale").await;
    assert!(note.contains("Out of date — run again"), "{note}");
    assert_eq!(s.text("#signal-results").await, table, "the out-of-date result should stay visible");
    // Running again makes it current.
    s.wait_for("#signal-run").await.click().await.unwrap();
    s.wait_js("the new run to be current", "return !document.querySelector('#signal-stale') && !document.querySelector('#signal-sampler') && !!document.querySelector('#signal-results');").await;
    s.close().await;
}

fn open_record_js() -> &'static str {
    "const li = document.querySelector('#design-list li.open'); const r = JSON.parse(localStorage.getItem('hysteron/design/' + li.dataset.id)).record;"
}

#[tokio::test(flavor = "multi_thread")]
async fn search_result_survives_a_reload_and_new_targets_mark_it_out_of_date_without_clearing_it() {
    let s = browser::start().await;
    s.add_starter("demo:lathe-tachometer").await;
    s.wait_for("#find-parts").await.click().await.unwrap();
    let rows = "return document.querySelectorAll('#alternatives tr.alternative').length;";
    s.wait_js("the alternatives to be listed", &format!("{{ const n = (() => {{ {rows} }})(); return n >= 5 && n; }}")).await;
    let listed = s.text("#alternatives").await;
    let summary = s.text("#search-summary").await;

    s.reload().await;
    let after = s.text("#alternatives").await;
    assert_eq!(after, listed, "the reload changed or lost the search result");
    assert_eq!(s.text("#search-summary").await, summary);
    assert_eq!(s.js("return !!document.querySelector('#search-stale')").await.as_bool(), Some(false));

    // Picking a set changes only resistors: the list stays current.
    s.js("document.querySelectorAll('#alternatives button.use-alternative')[1].click(); return 1;").await;
    s.wait_js("the pick to be applied", "return !!document.querySelector('#alternatives');").await;
    assert_eq!(s.js("return !!document.querySelector('#search-stale')").await.as_bool(), Some(false), "picking a set made the list stale");

    // New targets: the list stays, marked out of date with a message.
    s.type_into("#target-vt-upper", "3.1").await;
    s.wait_stored("r.targets.vt_upper_v === 3.1").await;
    let note = s.text("#search-stale").await;
    assert!(note.contains("Out of date") && note.contains("targets"), "{note}");
    assert_eq!(s.text("#alternatives").await, listed, "new targets cleared or changed the search result");
    // And it survives a reload in that state.
    s.reload().await;
    assert!(s.text("#search-stale").await.contains("Out of date"));
    assert_eq!(s.text("#alternatives").await, listed);
    // Searching again makes it current.
    s.wait_for("#find-parts").await.click().await.unwrap();
    s.wait_js("the new search to be current", "return !document.querySelector('#search-stale') && !!document.querySelector('#alternatives');").await;
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn the_greenhouse_demo_gives_each_node_one_warning() {
    let s = browser::start().await;
    s.add_starter("demo:greenhouse-valve").await;
    let v = s
        .wait_js(
            "the warnings to be shown",
            "const w = [...document.querySelectorAll('.warnings li.warning')].map(l => l.textContent); return w.length > 0 && w;",
        )
        .await;
    let warnings: Vec<String> = serde_json::from_value(v).unwrap_or_default();
    let about_p: Vec<&String> = warnings.iter().filter(|w| w.contains("node P")).collect();
    assert_eq!(about_p.len(), 1, "node P has {} warnings: {warnings:?}", about_p.len());
    assert!(about_p[0].contains("supply rail"), "{}", about_p[0]);
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn the_transistor_pair_temperature_laws_are_fields() {
    let s = browser::start().await;
    s.add_starter("topology:bjt_pair").await;
    for (field, text, key, value) in [
        ("#field-is_temperature_exponent", "3.5", "is_temperature_exponent", 3.5),
        ("#field-bandgap_v", "1.12", "bandgap_v", 1.12),
        ("#field-beta_temperature_exponent", "1.7", "beta_temperature_exponent", 1.7),
    ] {
        s.type_into(field, text).await;
        s.js(&format!("document.querySelector('{field}').blur(); return 1;")).await;
        let probe = format!(
            "{} const e = document.querySelector('{field}').closest('.field').querySelector('.field-error'); \
             return Math.abs(r.circuit.transistor.{key} - {value}) < 1e-12 || JSON.stringify([r.circuit.transistor, e && e.textContent]);",
            open_record_js()
        );
        let seen = browser::wait_until(&format!("{key} = {value} to be stored"), browser::WAIT, || async {
            let v = s.js(&probe).await;
            if v == serde_json::Value::Bool(true) { Ok(()) } else { Err(v.to_string()) }
        })
        .await;
        let _: () = seen;
    }
    // A value outside the physical range (EG 0.1 V to 5 V) is refused at the field, beside it;
    // every prefix typed ("0", "0.", "0.0") is out of range too, so the design keeps 1.12 V.
    s.type_into("#field-bandgap_v", "0.01").await;
    s.js("document.querySelector('#field-bandgap_v').blur(); return 1;").await;
    s.wait_js(
        "a message beside the EG field",
        "const f = document.querySelector('#field-bandgap_v'); const box = f.closest('.field'); const e = box && box.querySelector('.field-error'); \
         return !!box && box.classList.contains('invalid') && !!e && e.textContent.length > 0;",
    )
    .await;
    s.wait_stored("Math.abs(r.circuit.transistor.bandgap_v - 1.12) < 1e-12").await;
    s.close().await;
}
