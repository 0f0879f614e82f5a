//! The `hysteron` command line: every way its input can be wrong gives a clear message and a
//! non-zero exit, and good records give one JSON result each.

use std::io::Write;
use std::process::{Command, Output, Stdio};

fn run(args: &[&str], stdin: &str) -> Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_hysteron"))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start hysteron");
    child.stdin.take().unwrap().write_all(stdin.as_bytes()).unwrap();
    child.wait_with_output().unwrap()
}

fn fixture(name: &str) -> String {
    std::fs::read_to_string(format!("{}/../tests/fixtures/records/{name}.json", env!("CARGO_MANIFEST_DIR"))).unwrap()
}

fn results(out: &Output) -> Vec<serde_json::Value> {
    serde_json::from_slice::<Vec<serde_json::Value>>(&out.stdout).expect("stdout is a JSON array")
}

#[test]
fn every_fixture_evaluates_from_a_file_and_from_stdin() {
    let names = ["non_inverting", "open_drain", "plain_comparator", "supply_monitor", "cmos_buffer", "schmitt_gate", "bjt_pair"];
    let all: Vec<serde_json::Value> = names.iter().map(|n| serde_json::from_str(&fixture(n)).unwrap()).collect();
    let out = run(&["-"], &serde_json::to_string(&all).unwrap());
    let r = results(&out);
    assert_eq!(r.len(), names.len());
    for (n, v) in names.iter().zip(&r) {
        let ok = v.get("ok").unwrap_or_else(|| panic!("{n}: {v}"));
        assert!(ok["analysis"]["vt_upper_v"].as_f64().is_some(), "{n}");
        assert_eq!(ok["topology"].as_str(), Some(*n));
    }
    let path = format!("{}/../tests/fixtures/records/supply_monitor.json", env!("CARGO_MANIFEST_DIR"));
    let out = run(&[&path], "");
    assert_eq!(results(&out).len(), 1);
}

#[test]
fn malformed_json_exits_2_with_a_message() {
    let out = run(&[], "{ not json");
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("not a readable design record") && err.contains("line 1"), "{err}");
    assert!(out.stdout.is_empty());
}

#[test]
fn missing_file_and_extra_arguments_exit_2() {
    let out = run(&["/no/such/file.json"], "");
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot read /no/such/file.json"));
    let out = run(&["a", "b"], "");
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn unknown_topology_is_named_per_record_and_exits_1() {
    let mut v: serde_json::Value = serde_json::from_str(&fixture("open_drain")).unwrap();
    v["circuit"]["topology"] = "tube_flipflop".into();
    let good: serde_json::Value = serde_json::from_str(&fixture("plain_comparator")).unwrap();
    let out = run(&[], &serde_json::to_string(&vec![good, v]).unwrap());
    assert_eq!(out.status.code(), Some(1));
    let r = results(&out);
    assert!(r[0].get("ok").is_some());
    let msg = r[1]["error"]["message"].as_str().unwrap();
    assert!(msg.contains("tube_flipflop") && msg.contains("inverting"), "{msg}");
    assert_eq!(r[1]["error"]["index"].as_u64(), Some(1));
}

#[test]
fn out_of_range_values_and_future_versions_are_reported() {
    let mut v: serde_json::Value = serde_json::from_str(&fixture("non_inverting")).unwrap();
    v["circuit"]["r2_ohm"] = (-5.0).into();
    let out = run(&[], &v.to_string());
    assert_eq!(out.status.code(), Some(1));
    let r = results(&out);
    let errors = r[0]["ok"]["errors"].as_array().unwrap();
    let analysis = errors.iter().find(|e| e["study"] == "analysis").expect("analysis error");
    assert_eq!(analysis["error"]["kind"].as_str(), Some("invalid_value"));
    assert_eq!(analysis["error"]["field"].as_str(), Some("r2_ohm"));

    let mut f: serde_json::Value = serde_json::from_str(&fixture("non_inverting")).unwrap();
    f["schema_version"] = 42.into();
    let out = run(&[], &f.to_string());
    assert_eq!(out.status.code(), Some(1));
    assert!(results(&out)[0]["error"]["message"].as_str().unwrap().contains("newer version"));

    let mut t: serde_json::Value = serde_json::from_str(&fixture("non_inverting")).unwrap();
    t["targets"]["vt_upper_v"] = 1.0.into();
    t["targets"]["vt_lower_v"] = 2.0.into();
    let out = run(&[], &t.to_string());
    assert_eq!(out.status.code(), Some(1));
    let errs = results(&out)[0]["ok"]["errors"].as_array().unwrap().clone();
    assert!(errs.iter().any(|e| e["study"] == "synthesis" && e["error"]["kind"] == "infeasible"), "{errs:?}");
}

#[test]
fn help_exits_0() {
    let out = run(&["--help"], "");
    assert_eq!(out.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&out.stdout).contains("usage: hysteron"));
}
