//! Reference checks for the signal module: level-crossing rates against Rice's formula, the
//! relaxation oscillator against the textbook period, false-edge properties of the trigger, and
//! CSV import (line-numbered errors, exact round trips, chunked reading of a million rows).

use hysteron_core::analysis::{Sense, Thresholds};
use hysteron_core::signal::csv::{parse_csv, write_csv, CsvError, CsvIssueKind, CsvOptions, CsvParser, CsvWriteOptions, DecimalMark, Separator};
use hysteron_core::signal::generate::{Component, SignalDefinition};
use hysteron_core::signal::noise::{NoiseSource, SpikePolarity};
use hysteron_core::signal::oscillator::{op_amp_thresholds, relaxation_oscillator, simulate_oscillator, OscillatorForm, OscillatorSettings};
use hysteron_core::signal::trigger::{compare_edges, default_match_window_s, run_trigger, EdgeDirection, TimingModel, TriggerDesign};
use hysteron_core::signal::Times;
use proptest::prelude::*;
use std::f64::consts::PI;

fn trigger(up: f64, lo: f64, sense: Sense) -> TriggerDesign {
    TriggerDesign { thresholds: Thresholds { vt_upper_v: up, vt_lower_v: lo }, output_high_v: 5.0, output_low_v: 0.0, sense }
}

// ---------------------------------------------------------------------------------------------
// Rice's formula
// ---------------------------------------------------------------------------------------------

/// Up-crossings of band-limited Gaussian noise at several levels against Rice's formula
/// ν⁺(u) = (σ1/(2πσ0))·exp[−(u−μ)²/(2σ0²)] (S. O. Rice, "Mathematical analysis of random noise",
/// Bell System Technical Journal 23–24, 1944–45, §3.3; from memory).
///
/// The noise is four first-order poles at fc (smooth enough that counting crossings between
/// samples at 50·fc misses a negligible share: the sampled rate differs from the continuous one
/// by about (Δt²/24)(λ2 − λ4/λ2) ≈ −0.05 % here). σ1/σ0 is computed in this test by quadrature of
/// the spectrum S(f) ∝ (1 + (f/fc)²)^−4, not taken from the library. Up-crossings are counted as
/// the rising edges of a plain comparator (VT+ = VT− = u). The statistical error comes from the
/// spread of the counts in 20 equal blocks of the record (batch means), and the check allows four
/// standard errors plus 0.5 % for the sampling bias.
#[test]
fn upcrossing_rate_matches_rice() {
    let fc = 1000.0;
    let fs = 50.0 * fc;
    let n = 1_000_000;
    let sigma = 0.2;
    let mean = 1.0;
    let def = SignalDefinition {
        sample_rate_hz: fs,
        duration_s: n as f64 / fs,
        seed: 2024,
        components: vec![Component::Dc { level_v: mean }],
        noise: vec![NoiseSource::BandLimited { rms_v: sigma, corner_hz: fc, poles: 4 }],
    };
    let g = def.generate().unwrap();
    let v = &g.buffers.noisy_v;
    // σ1/σ0 by midpoint quadrature of f²S(f) and S(f) (x = f/fc up to 400, where S has fallen by 1e-21).
    let (mut m0, mut m2) = (0.0, 0.0);
    let h: f64 = 1e-3;
    let mut x: f64 = h / 2.0;
    while x < 400.0 {
        let s = (1.0 + x * x).powi(-4);
        m0 += s;
        m2 += x * x * s;
        x += h;
    }
    let ratio = 2.0 * PI * fc * (m2 / m0).sqrt(); // σ1/σ0
    let duration = (n - 1) as f64 / fs;
    let blocks = 20;
    let block_len = duration / blocks as f64;
    let mut edges = Vec::new();
    for &z in &[-1.0, 0.0, 0.5, 1.0, 1.5, 2.0] {
        let u = mean + z * sigma;
        let out = run_trigger(&trigger(u, u, Sense::NonInverting), &TimingModel::ideal(), g.time.view(), v, &mut edges);
        let mut per_block = vec![0.0; blocks];
        for e in edges.iter().filter(|e| e.direction == EdgeDirection::Rising) {
            let b = ((e.crossing_s / block_len) as usize).min(blocks - 1);
            per_block[b] += 1.0;
        }
        let total: f64 = per_block.iter().sum();
        assert_eq!(total as usize, out.rising);
        let bm = total / blocks as f64;
        let var = per_block.iter().map(|c| (c - bm) * (c - bm)).sum::<f64>() / (blocks - 1) as f64;
        let se_total = (var * blocks as f64).sqrt();
        let rice = ratio / (2.0 * PI) * (-0.5 * z * z).exp() * duration;
        let allowed = 4.0 * se_total + 0.005 * rice;
        assert!(
            (total - rice).abs() <= allowed,
            "level {z}σ: {total} up-crossings, Rice predicts {rice:.1} (allowed ±{allowed:.1})"
        );
        // The library's own formula agrees with the quadrature to 1e-6.
        let lib = hysteron_core::signal::rice::upcrossing_rate_hz(u, mean, sigma, sigma * 2.0 * PI * fc / 5f64.sqrt()) * duration;
        assert!((lib / rice - 1.0).abs() < 1e-6);
    }
}

// ---------------------------------------------------------------------------------------------
// Relaxation oscillator
// ---------------------------------------------------------------------------------------------

/// Symmetric op-amp astable: T = 2RC·ln[(1+β)/(1−β)], β = R1/(R1+R2) (Sedra & Smith,
/// *Microelectronic Circuits*, astable-multivibrator section; from memory). β = (e−1)/(e+1)
/// gives T = 2RC exactly (shared/DOMAIN.md §1e). Checked against the closed form and the
/// Runge–Kutta simulation.
#[test]
fn op_amp_astable_matches_textbook_period() {
    let (r, c) = (47e3, 22e-9);
    let vsat = 12.0;
    let e = std::f64::consts::E;
    let beta_e = (e - 1.0) / (e + 1.0);
    for &(r1, r2) in &[(10e3, 10e3), (10e3, 47e3), (100e3, 100e3 * (1.0 - beta_e) / beta_e)] {
        let beta: f64 = r1 / (r1 + r2);
        let textbook = 2.0 * r * c * ((1.0 + beta) / (1.0 - beta)).ln();
        let t = op_amp_thresholds(r1, r2, vsat, -vsat).unwrap();
        let d = TriggerDesign { thresholds: t, output_high_v: vsat, output_low_v: -vsat, sense: Sense::Inverting };
        let s = OscillatorSettings { form: OscillatorForm::OpAmp, r_ohm: r, c_f: c, ..Default::default() };
        let closed = relaxation_oscillator(&d, &s).unwrap();
        assert!((closed.period_s / textbook - 1.0).abs() < 1e-12, "β {beta}");
        assert!((closed.duty - 0.5).abs() < 1e-12);
        assert!((closed.beta.unwrap() - beta).abs() < 1e-15);
        let sim = simulate_oscillator(&d, &s, 4).unwrap();
        assert!((sim.period_s / textbook - 1.0).abs() < 1e-9, "β {beta}: simulated {}", sim.period_s);
        if (beta - beta_e).abs() < 1e-12 {
            assert!((textbook - 2.0 * r * c).abs() < 1e-15);
        }
    }
}

/// One Schmitt inverter: each half-period follows the RC charging law t = RC·ln[(V∞−V0)/(V∞−Vth)]
/// (Sedra & Smith, from memory): tH = RC·ln[(VDD−VT−)/(VDD−VT+)], tL = RC·ln(VT+/VT−) for
/// VOL = 0. With thresholds symmetric about VDD/2, VT± = (VDD/2)(1 ± β), both halves equal and
/// T = 2RC·ln[(1+β)/(1−β)], the same law as the op-amp form.
#[test]
fn schmitt_inverter_astable_matches_textbook_period() {
    let (r, c, vdd): (f64, f64, f64) = (100e3, 10e-6, 3.3);
    // An asymmetric pair (74HC14-like typicals at 3.3 V, our illustration) and a symmetric one.
    for &(up, lo) in &[(1.9f64, 1.1f64), (3.3 * 0.5 * 1.4, 3.3 * 0.5 * 0.6)] {
        let th: f64 = r * c * ((vdd - lo) / (vdd - up)).ln();
        let tl: f64 = r * c * (up / lo).ln();
        let d = TriggerDesign { thresholds: Thresholds { vt_upper_v: up, vt_lower_v: lo }, output_high_v: vdd, output_low_v: 0.0, sense: Sense::Inverting };
        let s = OscillatorSettings { r_ohm: r, c_f: c, ..Default::default() };
        let closed = relaxation_oscillator(&d, &s).unwrap();
        assert!((closed.t_high_s / th - 1.0).abs() < 1e-12);
        assert!((closed.t_low_s / tl - 1.0).abs() < 1e-12);
        let sim = simulate_oscillator(&d, &s, 3).unwrap();
        assert!((sim.period_s / (th + tl) - 1.0).abs() < 1e-9);
        assert!((sim.duty - th / (th + tl)).abs() < 1e-9);
        if ((up + lo) - vdd).abs() < 1e-12 {
            let beta: f64 = 0.4;
            assert!(((th + tl) / (2.0 * r * c * ((1.0 + beta) / (1.0 - beta)).ln()) - 1.0).abs() < 1e-12);
        }
    }
}

// ---------------------------------------------------------------------------------------------
// False edges
// ---------------------------------------------------------------------------------------------

fn sine_def(amplitude: f64, centre: f64, freq: f64, seed: u64, noise: Vec<NoiseSource>) -> SignalDefinition {
    SignalDefinition {
        sample_rate_hz: 100e3,
        duration_s: 0.05,
        seed,
        components: vec![Component::Dc { level_v: centre }, Component::Sine { amplitude_v: amplitude, frequency_hz: freq, phase_deg: 0.0 }],
        noise,
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: hysteron_tests::proptest_cases(24), ..ProptestConfig::default() })]

    /// A noise-free sine gives exactly the analytic edges: one per threshold crossing, at
    /// t = (k + arcsin((VT+ − c)/A)/(2π))/f on the rising side and
    /// t = (k + ½ − arcsin((VT− − c)/A)/(2π))/f on the falling side (common practice), within
    /// the linear-interpolation error; and none of them counts as false.
    #[test]
    fn noise_free_sine_gives_the_analytic_edges(
        amp in 0.5f64..3.0, centre in -1.0f64..1.0, freq in 60.0f64..400.0, up_frac in 0.05f64..0.9, width_frac in 0.05f64..0.9,
    ) {
        let up = centre + up_frac * amp;
        let lo = up - width_frac * (up - (centre - 0.9 * amp));
        let def = sine_def(amp, centre, freq, 1, vec![]);
        let g = def.generate().unwrap();
        let d = trigger(up, lo, Sense::NonInverting);
        let mut edges = Vec::new();
        run_trigger(&d, &TimingModel::ideal(), g.time.view(), &g.buffers.clean_v, &mut edges);
        let t_end = (g.buffers.clean_v.len() - 1) as f64 / def.sample_rate_hz;
        let rise0 = ((up - centre) / amp).asin() / (2.0 * PI);
        let fall0 = 0.5 - ((lo - centre) / amp).asin() / (2.0 * PI);
        let mut expected = Vec::new();
        for k in 0..100 {
            for (phase, dir) in [(rise0, EdgeDirection::Rising), (fall0, EdgeDirection::Falling)] {
                let t = (k as f64 + phase) / freq;
                if t > 0.0 && t < t_end {
                    expected.push((t, dir));
                }
            }
        }
        expected.sort_by(|a, b| a.0.total_cmp(&b.0));
        // Skip an expected edge within one sample of the record's end or start.
        expected.retain(|(t, _)| *t > 2e-5 && *t < t_end - 2e-5);
        let got: Vec<_> = edges.iter().filter(|e| e.crossing_s > 2e-5 && e.crossing_s < t_end - 2e-5).collect();
        prop_assert_eq!(got.len(), expected.len());
        for (e, (t, dir)) in got.iter().zip(&expected) {
            prop_assert_eq!(e.direction, *dir);
            // Interpolation error ≤ Δt²·|v''|/(8·|v'|) ≤ Δt²·(2πf)²·A/(8·|v'|), |v'| ≥ 2πfA·√(1−0.9²).
            let tol = 1e-10_f64.max(1e-10 * (2.0 * PI * freq) / (8.0 * 0.43) * 10.0);
            prop_assert!((e.crossing_s - t).abs() < tol, "{} vs {}", e.crossing_s, t);
        }
        let w = default_match_window_s(&edges, t_end);
        let c = compare_edges(&edges, &edges, w);
        prop_assert_eq!((c.false_edges, c.missed_edges), (0, 0));
    }

    /// Hysteresis wider than the noise's peak-to-peak gives no false edges (and misses none) on a
    /// sine: after switching at VT+ the noisy input can fall at most the noise's peak-to-peak
    /// below the level it switched at while the sine still rises, which stays above VT− when
    /// H > p-p (common practice: H ≥ noise p-p, shared/DOMAIN.md §4). Noise: white, band-limited,
    /// hum and spikes together; the peak-to-peak is measured on the generated noise itself.
    #[test]
    fn hysteresis_wider_than_noise_peak_to_peak_gives_no_false_edges(
        seed in any::<u64>(), white in 0.001f64..0.05, band in 0.0f64..0.05, hum in 0.0f64..0.05, spike in 0.0f64..0.2,
    ) {
        let noise = vec![
            NoiseSource::White { rms_v: white },
            NoiseSource::BandLimited { rms_v: band, corner_hz: 2000.0, poles: 1 },
            NoiseSource::Hum { mains: Default::default(), amplitude_v: hum, phase_deg: 0.0, harmonics: vec![] },
            NoiseSource::Spikes { rate_hz: 200.0, amplitude_v: spike, decay_s: 2e-5, polarity: SpikePolarity::Random },
        ];
        let def = sine_def(1.0, 0.0, 100.0, seed, noise);
        let g = def.generate().unwrap();
        let (clean, noisy) = (&g.buffers.clean_v, &g.buffers.noisy_v);
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for (a, b) in noisy.iter().zip(clean) {
            lo = lo.min(a - b);
            hi = hi.max(a - b);
        }
        let pp = hi - lo;
        prop_assume!(pp < 0.25); // keeps A > H/2 + 2·p-p, so the noisy sine always clears the band
        let h = 1.05 * pp;
        let d = trigger(h / 2.0, -h / 2.0, Sense::Inverting);
        let (mut intended, mut actual) = (Vec::new(), Vec::new());
        run_trigger(&d, &TimingModel::ideal(), g.time.view(), clean, &mut intended);
        run_trigger(&d, &TimingModel::ideal(), g.time.view(), noisy, &mut actual);
        let c = compare_edges(&actual, &intended, default_match_window_s(&intended, 0.05));
        prop_assert_eq!((c.false_edges, c.missed_edges), (0, 0), "p-p {}", pp);
    }

    /// The plain comparator at the band centre gives false edges on the same kind of signal once
    /// the noise's derivative rivals the slope: the expected wrong-way crossings per edge,
    /// N = (σ1/s)·φ(s/σ1) − Q(s/σ1) (shared/DOMAIN.md §4), each an extra edge pair, add up to
    /// more than ten false edges over the record's nine edges here.
    #[test]
    fn comparator_chatters_on_the_same_signal(seed in any::<u64>(), rms in 0.01f64..0.03) {
        let def = sine_def(1.0, 0.0, 100.0, seed, vec![NoiseSource::White { rms_v: rms }]);
        let g = def.generate().unwrap();
        let base = trigger(0.0, 0.0, Sense::Inverting);
        let (mut intended, mut actual) = (Vec::new(), Vec::new());
        run_trigger(&base, &TimingModel::ideal(), g.time.view(), &g.buffers.clean_v, &mut intended);
        run_trigger(&base, &TimingModel::ideal(), g.time.view(), &g.buffers.noisy_v, &mut actual);
        let c = compare_edges(&actual, &intended, default_match_window_s(&intended, 0.05));
        prop_assert!(c.false_edges > 0, "{:?}", c);
        let (s0, s1) = hysteron_core::signal::rice::spectral_moments(rms, hysteron_core::signal::rice::Spectrum::Flat { bandwidth_hz: 50e3 });
        let expected = 2.0 * hysteron_core::signal::rice::wrong_way_crossings_no_hysteresis(2.0 * PI * 100.0, s1) * intended.len() as f64;
        prop_assert!(intended.len() >= 9 && expected > 10.0, "{} {}", intended.len(), expected);
        prop_assert!(s0 == rms);
    }
}

/// The signal study of a whole design record through the JSON entry point: a generated signal
/// with the demo tachometer's noise (shared/DOMAIN.md §7, scenario 1) and both applications.
#[test]
fn record_with_signal_and_applications_evaluates() {
    let text = r#"{"schema_version":1,"name":"tacho","circuit":{"topology":"inverting","ra_ohm":10000,"rail_a":"supply","rb_ohm":10000,"rail_b":"ground","rf_ohm":20000,"device":{"supply_v":5}},
      "signal":{"sample_rate_hz":100000,"duration_s":0.05,"seed":3,
        "components":[{"kind":"dc","level_v":2.3},{"kind":"sine","amplitude_v":1.9,"frequency_hz":60}],
        "noise":[{"kind":"hum","mains":"hz50","amplitude_v":0.075},{"kind":"white","rms_v":0.025}],
        "sweep":{"steps":5}},
      "application":{"oscillator":{"r_ohm":10000,"c_f":1e-7},"debounce":{"supply_v":5,"bounce_s":0.004,"target_delay_s":0.01}}}"#;
    let out = hysteron_core::evaluate::evaluate_json(text).unwrap();
    let hysteron_core::evaluate::RecordResult::Ok(e) = &out[0] else { panic!("{out:?}") };
    assert!(e.errors.is_empty(), "{:?}", e.errors);
    let s = e.signal.as_ref().unwrap();
    // Thresholds 3.0/2.0 V (the record's circuit), 1 V of hysteresis against 150 mV p-p hum + noise.
    assert!((s.design.thresholds.vt_upper_v - 3.0).abs() < 1e-12);
    assert_eq!(s.design.comparison.unwrap().false_edges, 0);
    assert!(s.baseline.comparison.unwrap().false_edges > 0);
    assert_eq!(s.sweep.as_ref().unwrap().points.len(), 5);
    let a = e.application.unwrap();
    let osc = a.oscillator.unwrap();
    // Symmetric thresholds 3/2 V in a 0–5 V swing: T = 2RC·ln(3/2) (RC law, Sedra & Smith, from memory).
    assert!((osc.closed_form.period_s - 2.0 * 1e-3 * 1.5f64.ln()).abs() < 1e-12);
    assert!((osc.simulated_period_s.unwrap() / osc.closed_form.period_s - 1.0).abs() < 1e-9);
    let deb = a.debounce.unwrap();
    assert_eq!((deb.simulated_press_edges, deb.simulated_release_edges), (Some(1), Some(1)));
}

// ---------------------------------------------------------------------------------------------
// CSV import
// ---------------------------------------------------------------------------------------------

/// Malformed files of many kinds: each bad line is reported with its line number and kind;
/// strict mode fails, lenient mode keeps the good rows and lists every skipped line.
#[test]
fn malformed_csv_files_give_line_numbered_errors() {
    use CsvIssueKind::*;
    let cases: Vec<(&str, Vec<(usize, CsvIssueKind)>)> = vec![
        ("time,volts\n0,1\n1,abc\n2,3\n", vec![(3, NotANumber { column: 2 })]),
        ("0,1\n1\n2,3\n", vec![(2, FieldCount { found: 1, expected: 2 })]),
        ("0,1\n1,2,3\n2,3\n", vec![(2, FieldCount { found: 3, expected: 2 })]),
        ("0,1\n1,NaN\n2,inf\n3,-infinity\n4,5\n", vec![(2, NotFinite { column: 2 }), (3, NotFinite { column: 2 }), (4, NotFinite { column: 2 })]),
        ("0,1\n2,1\n1,1\n3,1\n", vec![(3, TimeNotIncreasing)]),
        ("0,1\n1,1\n1,2\n2,1\n", vec![(3, TimeNotIncreasing)]),
        ("0,1\n1,\n2,3\n", vec![(2, NotANumber { column: 2 })]),
        ("0,1\n,1\n2,3\n", vec![(2, NotANumber { column: 1 })]),
        ("0,1\n1,1.2.3\n2,3\n", vec![(2, NotANumber { column: 2 })]),
        ("t;v\n0;1,5\n1;2,5\n2;3.5\n3;4,5\n", vec![(4, NotANumber { column: 2 })]),
        ("t;v\n0.0;1.0\n1.0,2.0\n2.0;3.0\n", vec![(3, FieldCount { found: 1, expected: 2 })]),
        ("0\t1\n1\t\"x\"\n2\t3\n", vec![(2, NotANumber { column: 2 })]),
        ("0,1\n1,1\r\n,\n3,4\n", vec![(3, NotANumber { column: 1 })]),
        ("# scope export\ntime,ch1\n0,1\n1,2\nEND\n", vec![(5, FieldCount { found: 1, expected: 2 })]),
    ];
    for (text, expected) in cases {
        let err = parse_csv(text, &CsvOptions::default()).unwrap_err();
        let CsvError::BadLines { issues, .. } = &err else { panic!("{text:?}: {err:?}") };
        let got: Vec<(usize, CsvIssueKind)> = issues.iter().map(|i| (i.line, i.kind)).collect();
        assert_eq!(got, expected, "{text:?}");
        assert!(err.to_string().contains(&format!("line {}", expected[0].0)));
        let lenient = parse_csv(text, &CsvOptions { strict: false, ..Default::default() }).unwrap();
        assert_eq!(lenient.skipped.len(), expected.len());
        let data_lines = text.lines().filter(|l| !l.trim().is_empty()).count() - lenient.format.header_lines;
        assert_eq!(lenient.volts.len() + lenient.skipped.len(), data_lines, "{text:?}: no row may vanish");
    }
}

/// Generated data (noise included) written as CSV and read back is bit-identical, in every
/// separator and decimal-mark combination, and reading in random pieces gives the same capture.
#[test]
fn csv_round_trip_of_generated_data_is_exact() {
    let mut def = sine_def(1.3, 2.5, 123.0, 77, vec![NoiseSource::White { rms_v: 0.01 }, NoiseSource::BandLimited { rms_v: 1e-7, corner_hz: 10.0, poles: 2 }]);
    def.duration_s = 0.2;
    let g = def.generate().unwrap();
    let v = &g.buffers.noisy_v;
    for (separator, decimal) in [(Separator::Comma, DecimalMark::Point), (Separator::Semicolon, DecimalMark::Comma), (Separator::Tab, DecimalMark::Comma), (Separator::Semicolon, DecimalMark::Point)] {
        let text = write_csv(g.time.view(), v, &CsvWriteOptions { separator, decimal, ..Default::default() });
        let c = parse_csv(&text, &CsvOptions::default()).unwrap();
        assert_eq!((c.format.separator, c.format.decimal, c.format.header_lines), (separator, decimal, 1));
        assert_eq!(c.volts.len(), v.len());
        for (i, x) in v.iter().enumerate() {
            assert_eq!(c.volts[i].to_bits(), x.to_bits(), "row {i}");
            assert_eq!(c.time_s[i].to_bits(), g.time.view().at(i).to_bits(), "row {i}");
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: hysteron_tests::proptest_cases(16), ..ProptestConfig::default() })]

    /// Reading a file in pieces split at arbitrary points gives the same capture as reading it
    /// whole (the page reads large files a slice at a time).
    #[test]
    fn chunked_reading_matches_whole(cuts in proptest::collection::vec(1usize..400, 1..40), bad_line in 3usize..200) {
        let mut text = String::from("Time;Volts\n");
        for i in 0..250 {
            if i == bad_line {
                text.push_str("oops;1\n");
            } else {
                text.push_str(&format!("{};{}\n", i as f64 * 1e-4, (i as f64 * 0.37).sin()).replace('.', ","));
            }
        }
        let opts = CsvOptions { strict: false, ..Default::default() };
        let whole = parse_csv(&text, &opts).unwrap();
        let mut p = CsvParser::new(opts).unwrap();
        let mut at = 0;
        for c in cuts.iter().cycle() {
            if at >= text.len() { break; }
            let end = (at + c).min(text.len());
            p.feed(&text[at..end]).unwrap();
            at = end;
        }
        let chunked = p.finish().unwrap();
        prop_assert_eq!(&chunked, &whole);
        prop_assert_eq!(whole.skipped.len(), 1);
        prop_assert_eq!(whole.skipped[0].line, bad_line + 2);
    }
}

/// A 1,000,000-row capture, as a bench oscilloscope exports it, read in 1 MB pieces with
/// progress after each piece: every row arrives, nothing is reported as malformed.
#[test]
fn million_row_capture_reads_in_pieces() {
    let n = 1_000_000;
    let t: Vec<f64> = (0..n).map(|i| -0.01 + i as f64 * 2e-8).collect();
    let v: Vec<f64> = (0..n).map(|i| ((i % 1000) as f64 * 0.001) - 0.5).collect();
    let text = write_csv(Times::Samples(&t), &v, &CsvWriteOptions::default());
    let mut p = CsvParser::new(CsvOptions::default()).unwrap();
    p.reserve(n);
    let mut at = 0;
    let mut last_rows = 0;
    while at < text.len() {
        let mut end = (at + (1 << 20)).min(text.len());
        while !text.is_char_boundary(end) {
            end -= 1;
        }
        let prog = p.feed(&text[at..end]).unwrap();
        assert!(prog.rows >= last_rows);
        last_rows = prog.rows;
        at = end;
    }
    let c = p.finish().unwrap();
    assert_eq!(c.volts.len(), n);
    assert!(c.skipped.is_empty());
    assert_eq!(c.volts[999_999].to_bits(), v[999_999].to_bits());
    assert!((c.mean_sample_rate_hz() - 5e7).abs() < 1.0);
}
