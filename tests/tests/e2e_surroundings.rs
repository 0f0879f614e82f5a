//! Browser end-to-end: the circuit around the trigger (issue 14) as an engineer meets it on the
//! page — the sawmill demo's thresholds at the field terminal against the textbook closed form of
//! a non-inverting trigger driven through a source resistance, a typed change to the series
//! resistor, the reference chosen as an adjustable shunt reference (its part in the part list),
//! the signal test run through the input network, and the print sheet's bench steps at the field
//! terminal with the field windows. Every value is typed with real key events
//! ([`Session::type_into`]).

use hysteron_core::bench::ReadingPoint;
use hysteron_core::catalog;
use hysteron_core::record::DesignRecord;
use hysteron_core::topology::{Circuit, Topology};
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
