//! Version-1 design records stay readable forever. Each file in tests/fixtures/records_v1/ (one per
//! topology, frozen as schema version 1 wrote them) is read through `DesignRecord::from_value` — and
//! so through every migration step — evaluated, and its thresholds checked against closed forms from
//! shared/DOMAIN.md §1 computed here from the file's own numbers (not through the library).

use hysteron_core::evaluate::evaluate;
use hysteron_core::record::{DesignRecord, SCHEMA_VERSION};
use serde_json::Value;

const TOPOLOGIES: [&str; 8] =
    ["inverting", "non_inverting", "open_drain", "plain_comparator", "supply_monitor", "cmos_buffer", "schmitt_gate", "bjt_pair"];

fn raw(name: &str) -> Value {
    let path = format!("{}/fixtures/records_v1/{name}.json", env!("CARGO_MANIFEST_DIR"));
    serde_json::from_str(&std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"))).unwrap()
}

fn num(v: &Value, path: &str) -> f64 {
    path.split('.').fold(v, |v, k| &v[k]).as_f64().unwrap_or_else(|| panic!("{path} is not a number"))
}

fn par(x: f64, y: f64) -> f64 {
    x * y / (x + y)
}

/// The thresholds `(VT+, VT−)` of a version-1 record, from its numbers by the closed forms of
/// shared/DOMAIN.md §1; `tol` is how close the library must come (volts).
fn closed_form(name: &str, r: &Value) -> ((f64, f64), f64) {
    let c = &r["circuit"];
    match name {
        "inverting" => {
            // §1a, rail-to-rail (ideal device, Ra to the supply, Rb to ground):
            // VT+ = VCC·Rb/(Rb + Ra‖Rf), VT− = VCC·(Rb‖Rf)/(Ra + Rb‖Rf).
            let (ra, rb, rf, vs) = (num(c, "ra_ohm"), num(c, "rb_ohm"), num(c, "rf_ohm"), num(c, "device.supply_v"));
            ((vs * rb / (rb + par(ra, rf)), vs * par(rb, rf) / (ra + par(rb, rf))), 1e-12)
        }
        "non_inverting" => {
            // §1b: m = R1/R2 with R1 → R1 + Rs; Vref = VS·Rb/(Ra+Rb) + VOS;
            // VT+ = Vref(1+m) − m·VOL, VT− = Vref(1+m) − m·VOH.
            // The bias-current terms (1 pA through tens of kΩ, below 1e-7 V) are inside the tolerance.
            let d = &c["device"];
            let vs = num(d, "supply_v");
            let (voh, vol) = (vs - num(d, "output_high_drop_v"), num(d, "negative_rail_v") + num(d, "output_low_rise_v"));
            let m = (num(c, "r1_ohm") + num(d, "source_resistance_ohm")) / num(c, "r2_ohm");
            let (ra, rb) = (num(c, "reference.ra_ohm"), num(c, "reference.rb_ohm"));
            let vref = vs * rb / (ra + rb) + num(d, "offset_v");
            ((vref * (1.0 + m) - m * vol, vref * (1.0 + m) - m * voh), 1e-6)
        }
        "open_drain" => {
            // §1c, inverting: the load RL turns the pull-up into Vpu·RL/(Rpu+RL) behind Rpu‖RL;
            // Vth = VS·Rb/(Ra+Rb), Rth = Ra‖Rb; VT+ = Vth + (Vpu−Vth)·Rth/(Rth+Rf+Rpu);
            // VT− = Vth + (VOL−Vth)·Rth/(Rth+Rf), VOL = the sink resistance times the total sink current
            // (KCL at the output: pull-up and feedback chain into the on-resistance).
            // Then §1a's error terms: VT± += −VOS − IB+·R(+), R(+) the resistance the (+) node sees.
            let p = &c["polarity"];
            let d = &c["device"];
            let vs = num(d, "supply_v");
            let (ra, rb, rf) = (num(p, "ra_ohm"), num(p, "rb_ohm"), num(p, "rf_ohm"));
            let (rpu0, rl, vpu0, rs) = (num(c, "rpu_ohm"), num(c, "rl_ohm"), num(c, "pullup_rail.fixed"), num(c, "sink_resistance_ohm"));
            let (vpu, rpu) = (vpu0 * rl / (rpu0 + rl), par(rpu0, rl));
            let (vth, rth) = (vs * rb / (ra + rb), par(ra, rb));
            let vol = (vpu / rpu + vth / (rth + rf)) / (1.0 / rpu + 1.0 / (rth + rf) + 1.0 / rs);
            let (vos, ib) = (num(d, "offset_v"), num(d, "bias_plus_a"));
            let up = vth + (vpu - vth) * rth / (rth + rf + rpu) - vos - ib * par(rth, rf + rpu);
            let lo = vth + (vol - vth) * rth / (rth + rf) - vos - ib * par(rth, rf + par(rpu, rs));
            ((up, lo), 1e-6)
        }
        "plain_comparator" => {
            // Voltage-divider rule (Horowitz & Hill §1.2.3, from memory) and the datasheet definition
            // of built-in hysteresis (trip points VREF + VOS ± VHYST/2, from memory).
            // The bias current (10 pA through Ra‖Rb, about 1e-7 V) is inside the tolerance.
            let d = &c["device"];
            let (ra, rb, vs) = (num(c, "reference.ra_ohm"), num(c, "reference.rb_ohm"), num(d, "supply_v"));
            let centre = vs * rb / (ra + rb) + num(d, "offset_v");
            let h = num(d, "builtin_hysteresis_v");
            ((centre + h / 2.0, centre - h / 2.0), 1e-6)
        }
        "supply_monitor" => {
            // §1g, open-drain output (Rpu to Vpu), comparator on its own supply:
            // G = 1 + Rtop/Rbot + r, r = Rtop/Rh, r′ = Rtop/(Rh+Rpu);
            // V_rise (VT+) = (VREF+VOS)·G − VOL·r + IB+·Rtop;
            // V_fall (VT−) = (VREF+VOS)(1 + Rtop/Rbot + r′) − Vpu·r′ + IB+·Rtop.
            let d = &c["device"];
            let (rt, rbot, rh) = (num(c, "rtop_ohm"), num(c, "rbot_ohm"), num(c, "rh_ohm"));
            let (rpu, vpu) = (num(c, "output.rpu_ohm"), num(c, "output.pullup_rail.fixed"));
            let vref = num(c, "vref_v") + num(d, "offset_v");
            let (ib, vol) = (num(d, "bias_plus_a"), num(d, "output_low_rise_v"));
            let (r, r2) = (rt / rh, rt / (rh + rpu));
            let rise = vref * (1.0 + rt / rbot + r) - vol * r + ib * rt;
            let fall = vref * (1.0 + rt / rbot + r2) - vpu * r2 + ib * rt;
            ((rise, fall), 1e-6)
        }
        "cmos_buffer" => {
            // §1d, R3 to ground (Vb = 0), VM = fraction·VDD:
            // VT+ = VM + R1[(VM−VOL)/R2 + (VM−Vb)/R3]; VT− = VM + R1[(VM−VOH)/R2 + (VM−Vb)/R3].
            let g = &c["gate"];
            let vdd = num(g, "supply_v");
            let vm = num(g, "switching_point.fraction") * vdd;
            let (voh, vol) = (vdd - num(g, "output_high_drop_v"), num(g, "output_low_v"));
            let (r1, r2, r3) = (num(c, "r1_ohm"), num(c, "r2_ohm"), num(c, "r3_ohm"));
            let up = vm + r1 * ((vm - vol) / r2 + vm / r3);
            let lo = vm + r1 * ((vm - voh) / r2 + vm / r3);
            ((up, lo), 1e-12)
        }
        "schmitt_gate" => {
            // §1e with a divider in front (Ra in series, Rb to ground; voltage-divider rule,
            // Horowitz & Hill §1.2.3, from memory): VT± = VT±gate(typ)·(Ra+Rb)/Rb.
            let g = &c["gate"];
            let a = (num(c, "ra_ohm") + num(c, "rb_ohm")) / num(c, "rb_ohm");
            ((a * num(g, "vt_upper.typ_v"), a * num(g, "vt_lower.typ_v")), 1e-12)
        }
        "bjt_pair" => {
            // §1f hand analysis with finite β (α = β/(β+1)): K = R2/(RC1+R1+R2), RB2 = (RC1+R1)‖R2;
            // IE2 = (K·VCC − VBE)/(RE + RB2/(β+1)), VT+ = VBE + RE·IE2;
            // VT− = K(VCC·RE + α·RC1·VBE)/(RE + α·K·RC1).
            // The record asks for the Ebers–Moll solution, whose thresholds differ from the hand
            // figure mainly through VBE at the fold (§1f's example: 0.16 V at 4.7 V): 0.25 V allowed.
            let t = &c["transistor"];
            let (vcc, vbe, beta) = (num(c, "supply_v"), num(t, "vbe_v"), num(t, "beta_f"));
            let (r1, r2, rc1, re) = (num(c, "r1_ohm"), num(c, "r2_ohm"), num(c, "rc1_ohm"), num(c, "re_ohm"));
            let alpha = beta / (beta + 1.0);
            let k = r2 / (rc1 + r1 + r2);
            let rb2 = par(rc1 + r1, r2);
            let ie2 = (k * vcc - vbe) / (re + rb2 / (beta + 1.0));
            let up = vbe + re * ie2;
            let lo = k * (vcc * re + alpha * rc1 * vbe) / (re + alpha * k * rc1);
            ((up, lo), 0.25)
        }
        other => panic!("no closed form for {other}"),
    }
}

fn thresholds_of(record: &DesignRecord) -> (f64, f64) {
    let e = evaluate(record);
    let a = e.analysis.unwrap_or_else(|| panic!("{}: {:?}", record.name, e.errors));
    (a.vt_upper_v, a.vt_lower_v)
}

#[test]
fn every_topology_has_a_frozen_version_1_record() {
    let dir = format!("{}/fixtures/records_v1", env!("CARGO_MANIFEST_DIR"));
    let mut found: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .filter_map(|e| e.ok()?.file_name().to_str()?.strip_suffix(".json").map(String::from))
        .collect();
    found.sort();
    let mut want: Vec<String> = TOPOLOGIES.iter().map(|s| s.to_string()).collect();
    want.sort();
    assert_eq!(found, want);
    assert_eq!(hysteron_core::topology::Topology::NAMES.len(), TOPOLOGIES.len(), "a new topology needs its v1 record here");
}

#[test]
fn version_1_records_read_evaluate_and_give_the_closed_form_thresholds() {
    for name in TOPOLOGIES {
        let v = raw(name);
        assert_eq!(v["schema_version"], 1, "{name}: the fixture must stay at version 1");
        assert_eq!(v["circuit"]["topology"], name);
        let record = DesignRecord::from_value(v.clone()).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_eq!(record.schema_version, SCHEMA_VERSION, "{name}");
        let (want, tol) = closed_form(name, &v);
        let got = thresholds_of(&record);
        assert!(
            (got.0 - want.0).abs() <= tol && (got.1 - want.1).abs() <= tol,
            "{name}: library VT+ {} VT− {}, closed form {} {} (±{tol} V)",
            got.0,
            got.1,
            want.0,
            want.1
        );
        // The whole evaluation succeeds study by study as it did when the record was written.
        let e = evaluate(&record);
        assert!(e.bom.is_some() && e.exports.as_ref().is_some_and(|x| x.bench.is_some()), "{name}: {:?}", e.errors);
    }
}

#[test]
fn the_bjt_hand_model_matches_its_closed_form_exactly() {
    // The same v1 record with the hand model: §1f's hand analysis is then the library's own
    // equation and must agree to rounding.
    let mut v = raw("bjt_pair");
    v["circuit"]["model"] = "hand".into();
    let ((up, lo), _) = closed_form("bjt_pair", &v);
    let got = thresholds_of(&DesignRecord::from_value(v).unwrap());
    assert!((got.0 - up).abs() < 1e-9 && (got.1 - lo).abs() < 1e-9, "{got:?} vs {up} {lo}");
}
