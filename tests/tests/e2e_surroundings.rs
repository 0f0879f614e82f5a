//! Browser end-to-end: the circuit around the trigger (issue 14) as an engineer meets it on the
//! page — the sawmill demo's thresholds at the field terminal against the textbook closed form of
//! a non-inverting trigger driven through a source resistance, a typed change to the series
//! resistor, the reference chosen as an adjustable shunt reference (its part in the part list),
//! the signal test run through the input network, the print sheet's bench steps at the field
//! terminal with the field windows, and the key figures at the field terminal and the input network
//! on the schematic, readable at 1400 px and 390 px (screenshots of the schematic card:
//! `target/screenshots/sawmill-end-stop-schematic-{1400,390}.png`). Every value is typed with real
//! key events ([`Session::type_into`]).

use hysteron_core::bench::ReadingPoint;
use hysteron_core::catalog;
use hysteron_core::record::DesignRecord;
use hysteron_core::topology::{Circuit, Topology};
use base64::Engine;
use hysteron_tests::browser::{self, Session};

/// The sawmill demo as the catalog holds it.
fn sawmill() -> DesignRecord {
    catalog::demos().into_iter().find(|s| s.key == "sawmill-end-stop").expect("the sawmill demo").record()
}

/// Thresholds at the field terminal of a non-inverting trigger (input resistor R1, feedback R2)
/// fed from a dropper of ratio g through a source resistance Rs, its output behind Ro with a load RL:
/// the source resistance adds to R1,
/// so g·V = Vr·(1 + (R1+Rs)/R2) − Vout·(R1+Rs)/R2 (the non-inverting Schmitt's textbook thresholds,
/// e.g. Horowitz & Hill, from memory). Vr, the reference as the trigger sees it (offset included),
/// is recovered from the trigger's own pin thresholds with the same formula at Rs = 0.
fn closed_form_field(record: &DesignRecord, series_ohm: f64) -> (f64, f64) {
    let Topology::NonInverting(c) = &record.circuit else { panic!("the sawmill demo is a non-inverting trigger") };
    let net = record.input_network.as_ref().expect("the demo has an input network");
    let d = net.dropper.expect("the demo has a dropper");
    let f = net.filter.expect("the demo has a filter");
    let (voh, vol) = record.circuit.output_levels().expect("output levels (high, low)");
    let pin = record.circuit.thresholds().expect("pin thresholds");
    let (r1, r2) = (c.r1_ohm, c.r2_ohm);
    let vr = (pin.vt_upper_v + vol * r1 / r2) / (1.0 + r1 / r2);
    // The output under its load (Thevenin's theorem): levels ·RL/(Ro+RL) behind Ro‖RL, which adds
    // to the feedback resistor.
    let od = record.output_dynamics.expect("the demo has output dynamics");
    let (ro, rl) = (od.output_resistance_ohm, od.load_resistance_ohm.expect("a load resistor"));
    let (voh, vol, r2) = (voh * rl / (ro + rl), vol * rl / (ro + rl), r2 + ro * rl / (ro + rl));
    let g = d.bottom_ohm / (d.top_ohm + d.bottom_ohm);
    let rs = d.top_ohm * d.bottom_ohm / (d.top_ohm + d.bottom_ohm) + series_ohm + f.r_ohm;
    let k = (r1 + rs) / r2;
    ((vr * (1.0 + k) - vol * k) / g, (vr * (1.0 + k) - voh * k) / g)
}

/// Opens a study fold by clicking its summary, as a user does.
async fn open_fold(s: &Session, id: &str) {
    let open = s.js(&format!("return document.querySelector('#{id}').open")).await.as_bool() == Some(true);
    if !open {
        s.wait_for(&format!("#{id} > summary")).await.click().await.expect("open the fold");
    }
}

#[tokio::test(flavor = "multi_thread")]
async fn field_thresholds_follow_the_closed_form_and_a_typed_series_resistor() {
    let record = sawmill();
    let s = browser::start().await;
    s.add_starter("demo:sawmill-end-stop").await;
    open_fold(&s, "fold-input-network").await;
    let (up, lo) = closed_form_field(&record, record.input_network.as_ref().and_then(|n| n.series_ohm).unwrap());
    // The bias current (10 nA) through the network is left out of the closed form: 10 nA × 24 kΩ
    // is 0.24 mV at the pin, about 1.2 mV at the field terminal.
    let tol = 5e-3;
    let shown_up = s.wait_number("#net-field-upper", up, tol).await;
    let shown_lo = s.wait_number("#net-field-lower", lo, tol).await;
    assert!((shown_up - up).abs() < tol && (shown_lo - lo).abs() < tol, "page {shown_up}/{shown_lo} V, closed form {up}/{lo} V");
    // The scenario's wish: ON above about 15 V, OFF below about 10 V.
    assert!((14.0..16.5).contains(&shown_up) && (9.0..11.0).contains(&shown_lo), "{shown_up} / {shown_lo}");

    // A larger series resistor adds to R1: both thresholds move as the closed form says.
    s.type_into("#net-series", "10k").await;
    let (up2, lo2) = closed_form_field(&record, 10e3);
    s.wait_number("#net-field-upper", up2, tol).await;
    s.wait_number("#net-field-lower", lo2, tol).await;
    s.wait_stored("r.input_network.series_ohm === 10000").await;

    // The network's parts are in the part list, beside the shunt reference.
    s.wait_js("the network's parts in the part list", "return document.querySelectorAll('#bom tr.bom-network').length >= 6;").await;
    s.wait_js("the shunt reference in the part list", "return document.querySelectorAll('#bom tr.bom-regulator').length === 1;").await;
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn a_shunt_reference_chosen_on_the_page_joins_the_part_list_and_the_schematic() {
    let s = browser::start().await;
    s.add_starter("topology:non_inverting").await;
    let before = s.number("#vt-upper").await;
    s.wait_for("#reference-kind").await.select_by_value("shunt").await.expect("choose the shunt reference");
    s.wait_js("the shunt reference in the part list", "return document.querySelectorAll('#bom tr.bom-regulator').length === 1;").await;
    let designator = s.js("return document.querySelector('#bom tr.bom-regulator').dataset.designator;").await;
    let designator = designator.as_str().unwrap_or_default().to_string();
    s.wait_js(
        "the shunt reference on the schematic",
        &format!("const i = document.querySelector('#schematic'); return !!i && decodeURIComponent(i.src.split(',').slice(1).join(',')).includes('>{designator}</text>');"),
    )
    .await;
    // Its programmed voltage differs from the divider's, so VT+ moved.
    let after = s.wait_number_change("#vt-upper", before).await;
    assert!((after - before).abs() > 1e-3, "VT+ {before} → {after}");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn the_signal_test_runs_through_the_input_network() {
    let s = browser::start().await;
    s.add_starter("demo:sawmill-end-stop").await;
    open_fold(&s, "fold-signal").await;
    if s.js("return !!document.querySelector('#signal-add')").await.as_bool() == Some(true) {
        s.wait_for("#signal-add").await.click().await.unwrap();
    }
    s.wait_for("#signal-run").await.click().await.unwrap();
    s.wait_for("#signal-results").await;
    s.wait_text("#fold-signal", "a note that the signal passes the input network", |t| t.contains("passes the input network")).await;
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn the_print_sheet_bench_steps_drive_the_field_terminal_with_field_windows() {
    // The figures the sheet must show, computed natively by the same core (bit-identical in wasm).
    let record = sawmill();
    let sheet = hysteron_core::overview::sheet(&record).expect("the sawmill sheet");
    let field: Vec<_> = sheet.bench.readings.iter().filter(|r| r.at == ReadingPoint::FieldTerminal).collect();
    let range = |lo: Option<f64>, hi: Option<f64>| format!("{:.3} V … {:.3} V", lo.expect("a window"), hi.expect("a window"));
    let accept_up = format!("accept {}", range(field[0].bench_min_v, field[0].bench_max_v));
    let accept_down = format!("accept {}", range(field[1].bench_min_v, field[1].bench_max_v));
    let field_up = format!("field window {}", range(field[0].field_min_v, field[0].field_max_v));
    // The field thresholds (about 15 V and 10 V) are not the pin's (about 2.6 V and 2.5 V).
    assert!(field[0].nominal_v > 10.0 && field[1].nominal_v > 5.0, "{:?}", &field[..2]);

    let s = browser::start().await;
    s.add_starter("demo:sawmill-end-stop").await;
    // The browser fires `beforeprint` when the user prints; the sheet is computed then.
    s.js("window.dispatchEvent(new Event('beforeprint')); return 1;").await;
    let steps = s
        .wait_js(
            "the sheet's bench steps",
            "const e = document.querySelector('#sheet-bench-steps'); return !!e && e.children.length > 3 && e.textContent;",
        )
        .await;
    let steps = steps.as_str().unwrap_or_default().to_string();
    assert!(steps.contains("Connect the source to the field terminal"), "{steps}");
    assert!(steps.contains("Raise the field terminal slowly"), "{steps}");
    for want in [&accept_up, &accept_down, &field_up] {
        assert!(steps.contains(want.as_str()), "the sheet lacks {want}: {steps}");
    }
    assert!(steps.contains("Optional, at the pin, for reference"), "{steps}");
    s.close().await;
}

async fn cdp(s: &Session, cmd: &str, params: serde_json::Value) -> serde_json::Value {
    s.devtools(cmd, params).await
}

async fn viewport(s: &Session, width: u32, height: u32, dpr: f64) {
    cdp(s, "Emulation.setScrollbarsHidden", serde_json::json!({"hidden": true})).await;
    cdp(s, "Emulation.setDeviceMetricsOverride", serde_json::json!({"width": width, "height": height, "deviceScaleFactor": dpr, "mobile": false})).await;
    s.wait_js(
        &format!("the viewport to be {width} × {height}"),
        &format!("return innerWidth === {width} && innerHeight === {height} && devicePixelRatio === {dpr};"),
    )
    .await;
}

/// Saves a screenshot of the element `css` (scrolled into view) as `target/screenshots/<name>.png`.
async fn screenshot_of(s: &Session, css: &str, name: &str) {
    let r = s
        .js(&format!(
            "const el = document.querySelector('{css}'); el.scrollIntoView({{block: 'start'}}); const r = el.getBoundingClientRect(); \
             return {{x: r.left + scrollX, y: r.top + scrollY, w: r.width, h: r.height}};"
        ))
        .await;
    let clip = serde_json::json!({"x": r["x"], "y": r["y"], "width": r["w"], "height": r["h"], "scale": 1});
    let shot = cdp(s, "Page.captureScreenshot", serde_json::json!({"format": "png", "clip": clip, "captureBeyondViewport": true})).await;
    let png = base64::engine::general_purpose::STANDARD.decode(shot["data"].as_str().unwrap_or_default()).expect("base64");
    assert!(png.len() > 1000, "screenshot {name} is empty");
    let dir = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("..").join("target").join("screenshots");
    std::fs::create_dir_all(&dir).expect("create target/screenshots");
    std::fs::write(dir.join(format!("{name}.png")), png).expect("write screenshot");
}

/// The schematic image's drawing (the SVG in its `data:` URL).
async fn schematic_svg(s: &Session) -> String {
    // The schematic is built just after the rest of the design (its own piece of the page).
    s.wait_for("#schematic").await;
    s.js("const i = document.querySelector('#schematic'); return i ? decodeURIComponent(i.src.split(',').slice(1).join(',')) : '';")
        .await
        .as_str()
        .unwrap_or_default()
        .to_string()
}

/// The schematic as shown: its text size in CSS pixels (the drawing's 11 px text at the scale
/// the image is shown) and how far its shown aspect is from the drawing's own.
async fn schematic_scale(s: &Session) -> (f64, f64) {
    s.wait_js("the schematic to be loaded", "const i = document.querySelector('#schematic'); return !!i && i.complete && i.naturalWidth > 0 && i.clientWidth > 0;").await;
    let v = s
        .js("const i = document.querySelector('#schematic'); return [i.clientWidth / i.naturalWidth * 11, (i.clientWidth / i.clientHeight) / (i.naturalWidth / i.naturalHeight)];")
        .await;
    (v[0].as_f64().unwrap_or(0.0), v[1].as_f64().unwrap_or(0.0))
}

#[tokio::test(flavor = "multi_thread")]
async fn key_figures_lead_with_the_field_terminal_and_the_schematic_draws_the_network() {
    let record = sawmill();
    let s = browser::start().await;
    viewport(&s, 1400, 1000, 1.0).await;
    s.add_starter("demo:sawmill-end-stop").await;
    // What core computes for the page: the pin's thresholds and the field terminal's.
    let q = hysteron_core::overview::quick(&record);
    let pin = q.analysis.as_ref().expect("the demo analyses");
    let field = q.field_terminal.clone().expect("the demo has a network").expect("its network analyses");
    let tol = 1e-9;
    s.wait_number("#vt-upper-terminal", field.vt_upper_v, tol).await;
    s.wait_number("#vt-lower-terminal", field.vt_lower_v, tol).await;
    s.wait_number("#hysteresis-terminal", field.hysteresis_v(), tol).await;
    // #vt-upper keeps its meaning: the trigger's own threshold at its pin.
    s.wait_number("#vt-upper", pin.vt_upper_v, tol).await;
    s.wait_number("#vt-lower", pin.vt_lower_v, tol).await;
    let card = s.text("#key-vt-upper").await;
    assert!(card.contains("at the field terminal") && card.contains("input pin"), "{card}");
    // The field value comes first, the pin value after it.
    let order = s.js("const a = document.querySelector('#vt-upper-terminal'), b = document.querySelector('#vt-upper'); \
        return !!(a.compareDocumentPosition(b) & Node.DOCUMENT_POSITION_FOLLOWING) && parseFloat(getComputedStyle(a).fontSize) > parseFloat(getComputedStyle(b).fontSize);").await;
    assert_eq!(order, serde_json::Value::Bool(true), "the field figure leads, larger");

    // The schematic draws the network: its field terminal and every part of its part list.
    let parts = {
        let a = hysteron_core::topology::analyse(&record.circuit, &record.checks).unwrap();
        hysteron_core::overview::part_list(&record, &a).unwrap().input_network
    };
    assert!(parts.len() >= 6);
    let svg = schematic_svg(&s).await;
    assert!(svg.contains(">FIELD</text>"), "the field terminal is drawn");
    for p in &parts {
        assert!(svg.contains(&format!(">{}</text>", p.designator)), "{} on the schematic", p.designator);
    }
    // The drawing keeps its aspect and a readable text size at 1400 px.
    let (px, aspect) = schematic_scale(&s).await;
    assert!((aspect - 1.0).abs() < 0.01, "the schematic is shown at its own aspect (ratio {aspect})");
    assert!(px >= 9.5, "schematic text at 1400 px is {px:.1} px");
    screenshot_of(&s, "#schematic-view", "sawmill-end-stop-schematic-1400").await;

    // A typed series resistor moves the field figures as core computes them; the pin stays.
    open_fold(&s, "fold-input-network").await;
    s.type_into("#net-series", "10k").await;
    let mut changed = record.clone();
    changed.input_network.as_mut().unwrap().series_ohm = Some(10e3);
    let field2 = hysteron_core::overview::quick(&changed).field_terminal.unwrap().unwrap();
    s.wait_number("#vt-upper-terminal", field2.vt_upper_v, tol).await;
    s.wait_number("#vt-lower-terminal", field2.vt_lower_v, tol).await;
    s.wait_number("#vt-upper", pin.vt_upper_v, tol).await;
    s.wait_js("the new series resistor on the schematic", "const i = document.querySelector('#schematic'); return decodeURIComponent(i.src).includes('>10K</text>');").await;

    // At phone width the strip at the top says where its figures are taken.
    viewport(&s, 390, 844, 2.0).await;
    let (px, aspect) = schematic_scale(&s).await;
    assert!((aspect - 1.0).abs() < 0.01, "the schematic is shown at its own aspect at 390 px (ratio {aspect})");
    assert!(px >= 6.5, "schematic text at 390 px is {px:.1} px");
    screenshot_of(&s, "#schematic-view", "sawmill-end-stop-schematic-390").await;
    s.js("window.scrollTo(0, document.body.scrollHeight / 2); return true;").await;
    let strip = s.text("#key-strip").await;
    assert!(strip.contains("field terminal") && strip.contains("pin"), "{strip}");

    // The drawings with the oscillator's or debouncer's parts below the trigger keep their
    // aspect and text size too (a fixed height used to shrink them).
    viewport(&s, 1400, 1000, 1.0).await;
    for demo in ["beehive-clock", "rain-gauge"] {
        s.add_starter(&format!("demo:{demo}")).await;
        let (px, aspect) = schematic_scale(&s).await;
        assert!((aspect - 1.0).abs() < 0.01 && px >= 9.5, "{demo}: schematic aspect ratio {aspect}, text {px:.1} px");
        screenshot_of(&s, "#schematic-view", &format!("{demo}-schematic-1400")).await;
    }

    // A design without a network shows the pin figures only, as before.
    s.add_starter("topology:non_inverting").await;
    s.wait_js("no field-terminal figures without a network", "return !!document.querySelector('#vt-upper') && !document.querySelector('#vt-upper-terminal');").await;
    let svg = schematic_svg(&s).await;
    assert!(!svg.contains(">FIELD</text>"));
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn the_print_sheet_draws_the_network_on_one_page() {
    use fantoccini::wd::{PrintConfiguration, PrintSize};
    let s = browser::start().await;
    s.add_starter("demo:sawmill-end-stop").await;
    s.js("window.dispatchEvent(new Event('beforeprint')); return 1;").await;
    s.wait_js(
        "the sheet's schematic with the network",
        "const i = document.querySelector('img.sheet-schematic'); return !!i && decodeURIComponent(i.src).includes('>FIELD</text>');",
    )
    .await;
    // The figures table leads with the field terminal, where the bench drives the design; the
    // pin's figures follow under their own heading.
    let record = hysteron_core::catalog::demos().into_iter().find(|d| d.key == "sawmill-end-stop").unwrap().record();
    let field = hysteron_core::input_network::from_record::record_network(&record).unwrap().unwrap().field;
    let shown = s.js("return document.querySelector('#sheet-terminal-vt-upper').textContent;").await.as_str().unwrap_or_default().to_string();
    assert_eq!(shown, format!("{:.3} V", field.vt_upper_v));
    let groups = s.js("return [...document.querySelectorAll('#design-sheet tr.sheet-group')].map(r => r.textContent).join(' | ');").await;
    assert_eq!(groups.as_str(), Some("At the field terminal (the bench drives it) | At the trigger's input pin"));
    let dir = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("..").join("target").join("screenshots");
    std::fs::create_dir_all(&dir).expect("create target/screenshots");
    for (size, label) in [(PrintSize::A4, "a4"), (PrintSize::US_LETTER, "letter")] {
        let cfg = PrintConfiguration::builder().size(size).shrink_to_fit(false).background(true).build().unwrap();
        let pdf = s.client.print(cfg).await.expect("print to PDF");
        // Kept beside the screenshots for a look (`pdftoppm -png` makes an image of it).
        let path = dir.join(format!("sawmill-end-stop-sheet-{label}.pdf"));
        std::fs::write(&path, &pdf).expect("write the PDF");
        let out = std::process::Command::new("pdfinfo").arg(&path).output().expect("pdfinfo (poppler-utils) runs");
        let text = String::from_utf8_lossy(&out.stdout).to_string();
        assert!(text.lines().any(|l| l.starts_with("Pages:") && l.trim_end().ends_with(" 1")), "{label}: {text}");
    }
    s.close().await;
}
