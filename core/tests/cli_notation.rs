//! The `hysteron` command line reads numbers written as the page's fields accept them: engineering
//! notation and the IEC 60062 RKM code ("4k7", "100n", "2M2", "4K7", "R47", "10 k"), and names the
//! field and the text when such a text is no number.

use std::io::Write;
use std::process::{Command, Output, Stdio};

fn run(stdin: &str) -> Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_hysteron"))
        .arg("-")
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start hysteron");
    child.stdin.take().unwrap().write_all(stdin.as_bytes()).unwrap();
    child.wait_with_output().unwrap()
}

fn results(out: &Output) -> Vec<serde_json::Value> {
    serde_json::from_slice::<Vec<serde_json::Value>>(&out.stdout).expect("stdout is a JSON array")
}

/// An inverting Schmitt trigger on a single 5 V supply, resistors as text.
fn inverting(ra: &str, rb: &str, rf: &str, supply: &str) -> String {
    format!(
        r#"{{"schema_version":1,"name":"4k7 divider","circuit":{{"topology":"inverting","ra_ohm":"{ra}","rail_a":"supply",
        "rb_ohm":"{rb}","rail_b":"ground","rf_ohm":"{rf}","device":{{"supply_v":"{supply}"}}}}}}"#
    )
}

/// VT+ and VT− of the inverting trigger with ideal rails 0 and Vs (shared/DOMAIN.md §1a):
/// VT+ = Vs·Rb/(Rb + Ra‖Rf), VT− = Vs·(Rb‖Rf)/(Ra + Rb‖Rf).
fn closed_form(ra: f64, rb: f64, rf: f64, vs: f64) -> (f64, f64) {
    let par = |x: f64, y: f64| x * y / (x + y);
    (vs * rb / (rb + par(ra, rf)), vs * par(rb, rf) / (ra + par(rb, rf)))
}

#[test]
fn resistors_and_supply_written_as_text_are_read() {
    let cases = [
        (("4k7", "4K7", "10 k", "5"), (4.7e3, 4.7e3, 10e3, 5.0)),
        (("2M2", "1M", "R47", "5.0"), (2.2e6, 1e6, 0.47, 5.0)),
        (("100k", "100k", "2M2", "5V"), (100e3, 100e3, 2.2e6, 5.0)),
    ];
    for ((ra, rb, rf, vs), (a, b, f, v)) in cases {
        let out = run(&inverting(ra, rb, rf, vs));
        let r = results(&out);
        let ok = r[0].get("ok").unwrap_or_else(|| panic!("{ra} {rb} {rf}: {}", r[0]));
        let (up, lo) = closed_form(a, b, f, v);
        let got_up = ok["analysis"]["vt_upper_v"].as_f64().unwrap();
        let got_lo = ok["analysis"]["vt_lower_v"].as_f64().unwrap();
        assert!((got_up - up).abs() < 1e-9 && (got_lo - lo).abs() < 1e-9, "{ra} {rb} {rf}: {got_up} {got_lo} vs {up} {lo}");
        // The name stays text even though it looks like a value.
        assert_eq!(ok["name"], "4k7 divider");
    }
}

#[test]
fn counts_in_study_settings_read_as_text_too() {
    // "1k" trials and a seed as text in the tolerance settings.
    let mut v: serde_json::Value = serde_json::from_str(&inverting("10k", "10k", "20k", "5")).unwrap();
    v["tolerance"] = serde_json::json!({"monte_carlo": {"trials": "1k", "seed": "7"}});
    let out = run(&v.to_string());
    let r = results(&out);
    assert!(r[0].get("ok").is_some(), "{}", r[0]);
    assert_eq!(r[0]["ok"]["tolerance"]["monte_carlo"]["trials"].as_u64(), Some(1000));
}

#[test]
fn a_text_that_is_no_number_names_field_and_text() {
    let out = run(&inverting("4k7", "4q7", "10k", "5"));
    assert_eq!(out.status.code(), Some(1));
    let r = results(&out);
    let msg = r[0]["error"]["message"].as_str().unwrap();
    assert!(msg.contains("circuit.rb_ohm") && msg.contains("\"4q7\""), "{msg}");
    assert!(!msg.contains("expected f64"), "{msg}");
}
