//! The `hysteron` command line: every way its input can be wrong gives a clear message and a
//! non-zero exit, and good records give one JSON result each.

use std::io::{Read, Write};
use std::process::{Command, Output, Stdio};

fn run(args: &[&str], stdin: &str) -> Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_hysteron"))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start hysteron");
    // Write from another thread: results stream out while the input is still going in, so a large
    // input written before reading the output would fill both pipes and wait forever.
    let mut input = child.stdin.take().unwrap();
    let text = stdin.to_string();
    let writer = std::thread::spawn(move || {
        // hysteron may stop reading early (a syntax error); a closed pipe is not this test's failure.
        let _ = input.write_all(text.as_bytes());
    });
    let out = child.wait_with_output().unwrap();
    writer.join().unwrap();
    out
}

fn fixture(name: &str) -> String {
    std::fs::read_to_string(format!("{}/../tests/fixtures/records/{name}.json", env!("CARGO_MANIFEST_DIR"))).unwrap()
}

fn results(out: &Output) -> Vec<serde_json::Value> {
    serde_json::from_slice::<Vec<serde_json::Value>>(&out.stdout).expect("stdout is a JSON array")
}

#[test]
fn every_fixture_evaluates_from_a_file_and_from_stdin() {
    let names = ["inverting", "non_inverting", "open_drain", "plain_comparator", "supply_monitor", "cmos_buffer", "schmitt_gate", "bjt_pair"];
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
    // Analysis errors name the field as the page shows it: the resistor's designator (issue 12).
    assert_eq!(analysis["error"]["field"].as_str(), Some("R2"));

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

/// A record that evaluates quickly: the inverting template without targets, named `design {i}`.
fn quick_record(i: usize) -> serde_json::Value {
    let mut v: serde_json::Value = serde_json::from_str(&fixture("inverting")).unwrap();
    v.as_object_mut().unwrap().remove("targets");
    v["name"] = format!("design {i}").into();
    v
}

#[test]
fn closed_output_exits_quietly_with_status_0() {
    // `hysteron big.json | head -c 10`: the reader stops after 10 bytes. hysteron must stop without a
    // panic message ("failed printing to stdout: Broken pipe") and exit 0 (documented in the binary).
    let all: Vec<serde_json::Value> = (0..400).map(quick_record).collect();
    let path = std::env::temp_dir().join(format!("hysteron-cli-pipe-{}.json", std::process::id()));
    std::fs::write(&path, serde_json::to_string(&all).unwrap()).unwrap();
    let mut child = Command::new(env!("CARGO_BIN_EXE_hysteron"))
        .arg(&path)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start hysteron");
    let mut first = [0u8; 10];
    child.stdout.take().unwrap().read_exact(&mut first).unwrap();
    // The pipe's read end is dropped here; the next write hysteron makes fails with EPIPE.
    let out = child.wait_with_output().unwrap();
    let _ = std::fs::remove_file(&path);
    assert_eq!(&first[..4], b"[\n  ");
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.is_empty(), "stderr: {err}");
    assert_eq!(out.status.code(), Some(0));
}

#[test]
fn a_long_array_streams_with_every_result_in_order() {
    // Every seventh element is not a readable record: its error carries its own index.
    let n = 700;
    let all: Vec<serde_json::Value> =
        (0..n).map(|i| if i % 7 == 3 { serde_json::json!({ "name": i }) } else { quick_record(i) }).collect();
    let input = serde_json::to_string(&all).unwrap();
    let out = run(&[], &input);
    assert_eq!(out.status.code(), Some(1), "{}", String::from_utf8_lossy(&out.stderr));
    let r = results(&out);
    assert_eq!(r.len(), n);
    for (i, v) in r.iter().enumerate() {
        if i % 7 == 3 {
            assert_eq!(v["error"]["index"].as_u64(), Some(i as u64), "{v}");
        } else {
            assert_eq!(v["ok"]["name"].as_str(), Some(format!("design {i}").as_str()));
            assert!(v["ok"]["analysis"]["vt_upper_v"].as_f64().is_some());
        }
    }
    // Byte for byte what the whole list gives, evaluated at once and written by serde_json's pretty
    // printer (the output format before streaming).
    let whole = serde_json::to_string_pretty(&hysteron_core::evaluate::evaluate_json(&input).unwrap()).unwrap() + "\n";
    let streamed = String::from_utf8(out.stdout).unwrap();
    let first_difference = whole.bytes().zip(streamed.bytes()).position(|(a, b)| a != b);
    assert!(
        whole == streamed,
        "streamed output ({} bytes) differs from the whole list ({} bytes), first at byte {first_difference:?}",
        streamed.len(),
        whole.len()
    );
}

#[test]
fn each_result_is_written_before_the_next_record_is_read() {
    // Streaming, not reading everything first: with the array still open on standard input, the first
    // record's result arrives.
    let mut child = Command::new(env!("CARGO_BIN_EXE_hysteron"))
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start hysteron");
    let mut stdin = child.stdin.take().unwrap();
    write!(stdin, "[{},", quick_record(0)).unwrap();
    stdin.flush().unwrap();
    let (tx, rx) = std::sync::mpsc::channel();
    let stdout = child.stdout.take().unwrap();
    let reader = std::thread::spawn(move || {
        // The first element ends with "\n  }"; the line break after it comes only with the next one.
        let mut stdout = stdout;
        let mut seen = Vec::new();
        let mut chunk = [0u8; 4096];
        let mut sent = false;
        loop {
            let n = stdout.read(&mut chunk).unwrap();
            if n == 0 {
                break;
            }
            seen.extend_from_slice(&chunk[..n]);
            if !sent && seen.ends_with(b"\n  }") {
                tx.send(String::from_utf8_lossy(&seen).to_string()).unwrap();
                sent = true;
            }
        }
        String::from_utf8(seen).unwrap()
    });
    let first = rx.recv_timeout(std::time::Duration::from_secs(60)).expect("first result before the input ended");
    assert!(first.contains("\"design 0\""), "{first}");
    write!(stdin, "{}]", quick_record(1)).unwrap();
    drop(stdin);
    let all = reader.join().unwrap();
    assert!(all.contains("\"design 1\"") && all.ends_with("\n]\n"), "{all}");
    assert_eq!(child.wait().unwrap().code(), Some(0));
}

#[test]
fn input_that_breaks_off_mid_array_exits_2_after_the_results_before_it() {
    let text = format!("[{}, {}, {{\"schema", quick_record(0), quick_record(1));
    let out = run(&[], &text);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("not a readable design record") && err.contains("EOF"), "{err}");
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(stdout.contains("\"design 1\"") && !stdout.trim_end().ends_with(']'), "{stdout}");
    // Text after a complete record is refused the same way.
    let out = run(&[], &format!("{} trailing", quick_record(0)));
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("trailing characters"));
}
