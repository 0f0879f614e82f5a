//! The headless evaluation of design records: what the command-line entry point and the page's
//! checks run. Each record gives one result; each study inside a result succeeds or fails on its own.

use crate::analysis::Analysis;
use crate::bom::Bom;
use crate::search::SearchReport;
use crate::error::DesignError;
use crate::record::{DesignRecord, RecordError};
use crate::tolerance::{tolerance_report, ToleranceReport};
use crate::topology::{analyse, sensitivities};
use serde::{Deserialize, Serialize};

/// ∂VT/∂p of one parameter.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Sensitivity {
    /// Parameter identifier (record field name).
    pub id: String,
    /// Part designator, for resistors.
    pub designator: Option<String>,
    /// ∂VT+/∂p, volts per base unit.
    pub d_vt_upper: f64,
    /// ∂VT−/∂p, volts per base unit.
    pub d_vt_lower: f64,
}

pub use crate::overview::Synthesis;

/// A study that failed, and why.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StudyError {
    /// Which study: "analysis", "synthesis", "sensitivities"...
    pub study: String,
    /// The error.
    pub error: DesignError,
}

/// Everything computed for one record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Evaluation {
    /// The record's name.
    pub name: String,
    /// The record's topology name.
    pub topology: String,
    /// Forward analysis of the circuit as entered.
    pub analysis: Option<Analysis>,
    /// ∂VT/∂p for every parameter of the circuit as entered.
    pub sensitivities: Option<Vec<Sensitivity>>,
    /// Synthesis towards the record's targets, when it has targets.
    pub synthesis: Option<Synthesis>,
    /// Studies that failed.
    pub errors: Vec<StudyError>,
    /// Tolerance analysis, when the record has tolerance settings.
    pub tolerance: Option<ToleranceReport>,
    /// The two named windows, when the record has tolerance settings: the field window (every
    /// tolerance over its full range; the tolerance study's worst case) and the bench window at
    /// each supply the bench procedure sets (part tolerances and device spread at 25 °C), see
    /// [`crate::tolerance::bench_window`].
    #[serde(default)]
    pub windows: Option<crate::tolerance::Windows>,
    /// The signal study's summary, when the record has signal settings.
    pub signal: Option<crate::signal::report::SignalReport>,
    /// The applications (oscillator, debouncer), when the record has application settings.
    pub application: Option<crate::signal::report::ApplicationReport>,
    /// Part list of the circuit as entered.
    pub bom: Option<Bom>,
    /// Best standard-value combinations for the targets, when the record has targets and search settings.
    pub search: Option<SearchReport>,
    /// The share link, SPICE deck and bench procedure of the design as entered (see [`Exports`]).
    #[serde(default)]
    pub exports: Option<Exports>,
    /// Safety cautions computed from the design's values (see [`crate::safety::cautions`]).
    #[serde(default)]
    pub cautions: Vec<crate::safety::Caution>,
    /// VT± versus temperature over the record's operating range, with the drift (see
    /// [`crate::overview::temperature`]); `None` when the analysis failed or the sweep did.
    #[serde(default)]
    pub temperature: Option<crate::tolerance::TemperatureSweep>,
    /// The temperature drift in one line, as the print sheet gives it.
    #[serde(default)]
    pub temperature_summary: Option<String>,
    /// The input network in front of the trigger, when the record has one: thresholds at the
    /// field terminal, clamp currents, dissipation, the filter (see [`crate::input_network`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input_network: Option<crate::input_network::NetworkReport>,
    /// Output dynamics (edges at the load, thresholds under load, speed-up capacitor, slow-input
    /// chatter check), when the record has `output_dynamics` settings.
    #[serde(default)]
    pub output_dynamics: Option<crate::output_dynamics::OutputDynamicsReport>,
    /// Power-up state over the supply ramp, when the record has `power_up` settings.
    #[serde(default)]
    pub power_up: Option<crate::power_up::PowerUpReport>,
}

/// The shareable and printable forms of a design, computed with every evaluation.
///
/// The SVG schematic is not included: it is several kilobytes per style and the page draws it on
/// demand with [`crate::schematic::render_svg`]; the command-line output stays small.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Exports {
    /// The share-link fragment payload (`h1.…`, put after `#`), see [`crate::share`].
    pub link: String,
    /// The SPICE3 netlist, see [`crate::spice`]; `None` when the circuit cannot be exported
    /// (the reason is in `errors` under the study "exports").
    pub spice: Option<String>,
    /// The bench test procedure, see [`crate::bench`]; `None` when the thresholds cannot be
    /// computed (the reason is in `errors`). Bands are empty until the tolerance study provides them.
    pub bench: Option<crate::bench::BenchProcedure>,
}

pub use crate::overview::thresholds;

/// Evaluates one record: analysis, sensitivities, part list and (with targets) synthesis and
/// (with search settings too) the standard-value search.
pub fn evaluate(record: &DesignRecord) -> Evaluation {
    let mut errors = Vec::new();
    let mut fail = |study: &str, error: DesignError| errors.push(StudyError { study: study.into(), error });
    let analysis = match analyse(&record.circuit, &record.checks) {
        Ok(a) => Some(a),
        Err(e) => {
            fail("analysis", e);
            None
        }
    };
    let analysis = crate::finite::keep("analysis", analysis, &mut fail);
    let sens = if analysis.is_some() {
        match sensitivities(&record.circuit) {
            Ok(s) => Some(
                s.into_iter()
                    .map(|(p, up, lo)| Sensitivity { id: p.id, designator: p.designator, d_vt_upper: up, d_vt_lower: lo })
                    .collect(),
            ),
            Err(e) => {
                fail("sensitivities", e);
                None
            }
        }
    } else {
        None
    };
    let sens = crate::finite::keep("sensitivities", sens, &mut fail);
    let synthesis = record.targets.as_ref().and_then(|t| {
        match crate::overview::synthesis(record, t) {
            Ok(s) => Some(s),
            Err(e) => {
                fail("synthesis", e);
                None
            }
        }
    });
    let synthesis = crate::finite::keep("synthesis", synthesis, &mut fail);
    let tolerance = record.tolerance.as_ref().and_then(|s| match tolerance_report(&record.circuit, s) {
        Ok(r) => Some(r),
        Err(e) => {
            fail("tolerance", e);
            None
        }
    });
    let tolerance = crate::finite::keep("tolerance", tolerance, &mut fail);
    let windows = match (&tolerance, &analysis) {
        (Some(t), Some(a)) => crate::overview::windows(record, a, Some(&t.worst_case)).map_err(|e| fail("bench_window", e)).ok(),
        _ => None,
    };
    let windows = crate::finite::keep("bench_window", windows, &mut fail);
    let signal = record.signal.as_ref().and_then(|s| match crate::input_network::from_record::record_signal(record, s) {
        Ok(r) => Some(r),
        Err(e) => {
            fail("signal", e);
            None
        }
    });
    let signal = crate::finite::keep("signal", signal, &mut fail);
    let application = record.application.as_ref().and_then(|a| {
        match crate::signal::report::evaluate_record_application(&record.circuit, a) {
            Ok((r, errs)) => {
                for (study, e) in errs {
                    fail(&study, e);
                }
                Some(r)
            }
            Err(e) => {
                fail("application", e);
                None
            }
        }
    });
    let application = crate::finite::keep("application", application, &mut fail);
    let bom = analysis.as_ref().and_then(|a| crate::overview::part_list(record, a).map_err(|e| fail("bom", e)).ok());
    let bom = crate::finite::keep("bom", bom, &mut fail);
    let search = match (&record.targets, &record.search) {
        (Some(t), Some(_)) => {
            // The page's job, stepped to the end within the search's evaluation budget.
            crate::overview::standard_values_job(record, t, synthesis.as_ref())
                .and_then(|mut job| crate::search::run_job(&mut job, crate::search::MAX_EVALUATIONS))
                .map_err(|e| fail("search", e))
                .ok()
        }
        _ => None,
    };
    let search = crate::finite::keep("search", search, &mut fail);
    // The deck and the bench sheet need a working analysis; when it failed, its error already
    // says why and only the link (which carries inputs, not results) is produced.
    let exports = {
        let (spice, bench) = match &analysis {
            Some(a) => (
                crate::overview::spice(record).map_err(|e| fail("exports", e)).ok(),
                Some(crate::overview::bench(record, a, windows.as_ref())),
            ),
            None => (None, None),
        };
        let bench = bench.and_then(|b| crate::finite::check("bench", &b).map_err(|e| fail("exports", e)).ok().map(|()| b));
        Some(Exports { link: crate::share::encode_link(record), spice, bench })
    };
    let temperature = analysis
        .as_ref()
        .and_then(|_| crate::overview::temperature(record).map_err(|e| fail("temperature", e)).ok());
    let temperature_summary = temperature.as_ref().map(|t| crate::overview::temperature_line(record, t));
    let input_network = crate::input_network::from_record::record_network(record).and_then(|r| r.map_err(|e| fail("input_network", e)).ok());
    let (output_dynamics, power_up) = crate::overview::dynamics(record);
    let output_dynamics = output_dynamics.and_then(|r| r.map_err(|e| fail("output_dynamics", e)).ok());
    let output_dynamics = crate::finite::keep("output_dynamics", output_dynamics, &mut fail);
    let power_up = power_up.and_then(|r| r.map_err(|e| fail("power_up", e)).ok());
    let power_up = crate::finite::keep("power_up", power_up, &mut fail);
    Evaluation {
        name: record.name.clone(),
        topology: record.circuit.name().to_string(),
        analysis,
        sensitivities: sens,
        synthesis,
        errors,
        tolerance,
        windows,
        signal,
        application,
        bom,
        search,
        exports,
        cautions: crate::safety::cautions(record),
        temperature,
        temperature_summary,
        input_network,
        output_dynamics,
        power_up,
    }
}

/// The result for one input record: an evaluation, or why the record could not be read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RecordResult {
    /// The record was read and evaluated.
    Ok(Box<Evaluation>),
    /// The record could not be read.
    Error {
        /// Position of the record in the input (0 for a single record).
        index: usize,
        /// What was wrong.
        error: RecordError,
        /// The same, as a sentence.
        message: String,
    },
}

/// Evaluates JSON text holding one record or an array of records. Fails as a whole only when the
/// text is not JSON at all; every record gets its own result or its own error.
pub fn evaluate_json(text: &str) -> Result<Vec<RecordResult>, RecordError> {
    let value: serde_json::Value =
        serde_json::from_str(text).map_err(|e| RecordError::Malformed { message: e.to_string() })?;
    let items = match value {
        serde_json::Value::Array(items) => items,
        other => vec![other],
    };
    Ok(items
        .into_iter()
        .enumerate()
        .map(|(index, v)| match DesignRecord::from_value(v) {
            Ok(r) => RecordResult::Ok(Box::new(evaluate(&r))),
            Err(error) => RecordResult::Error { index, message: error.to_string(), error },
        })
        .collect())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::topology::Topology;

    #[test]
    fn array_with_one_bad_record_keeps_the_good_one() {
        let good = r#"{"schema_version":1,"name":"a","circuit":{"topology":"inverting","ra_ohm":10000,"rail_a":"supply","rb_ohm":10000,"rail_b":"ground","rf_ohm":20000,"device":{"supply_v":5}}}"#;
        let text = format!("[{good}, {{\"schema_version\": 1}}]");
        let out = evaluate_json(&text).unwrap();
        assert_eq!(out.len(), 2);
        match &out[0] {
            RecordResult::Ok(e) => {
                let a = e.analysis.as_ref().unwrap();
                assert!((a.vt_upper_v - 3.0).abs() < 1e-12);
            }
            other => panic!("{other:?}"),
        }
        assert!(matches!(out[1], RecordResult::Error { index: 1, .. }));
    }

    #[test]
    fn not_json_fails_whole() {
        assert!(evaluate_json("nope").is_err());
    }

    #[test]
    fn exports_carry_a_link_back_to_the_record_a_deck_and_a_bench_sheet() {
        let r = crate::catalog::templates()[0].record();
        let e = evaluate(&r);
        let x = e.exports.unwrap();
        assert_eq!(crate::share::decode_link(&x.link).unwrap(), r);
        assert!(x.spice.unwrap().ends_with(".end\n"));
        assert_eq!(x.bench.unwrap().readings[0].nominal_v, e.analysis.unwrap().vt_upper_v);
        // A broken circuit: the analysis error is reported once, the link still made.
        let mut bad = r.clone();
        if let Topology::Inverting(c) = &mut bad.circuit {
            c.rf_ohm = -1.0;
        }
        let e = evaluate(&bad);
        let x = e.exports.unwrap();
        assert!(x.spice.is_none() && x.bench.is_none());
        assert_eq!(e.errors.len(), 1);
        assert!(crate::share::decode_link(&x.link).is_ok());
    }
}
