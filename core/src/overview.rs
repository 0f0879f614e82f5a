//! What the page shows of one design, computed in one place: the page (and [`crate::evaluate`])
//! call these and render the result; neither assembles the pipelines itself.
//!
//! Three calls, by how often they run:
//! - [`quick`] on every keystroke: the analysis (or why it failed) and the transfer curve over
//!   [`curve_window`];
//! - [`snapshot`] when a design is saved: thresholds, curve and part values kept beside the record;
//! - [`settled`] once typing pauses (part list, cautions) and [`sheet`] / [`sheet_studies`] when the
//!   print sheet is made (field and bench windows, bench procedure with them, Monte Carlo yield,
//!   signal test).
//!
//! The part list is built by [`part_list`] only, and the bench procedure by [`bench`] only, so a
//! change to either is one line here.

use crate::analysis::{Analysis, ImpedanceChoice, Targets, Thresholds};
use crate::bench::{bench_procedure_from, bench_supplies, BenchProcedure, ReadingWindows, SupplyBounds, ThresholdBounds};
use crate::bom::Bom;
use crate::error::DesignError;
use crate::record::DesignRecord;
use crate::search::{search, SearchJob, SearchReport, SearchSettings};
use crate::safety::{cautions, Caution};
use crate::signal::report::SignalReport;
use crate::tolerance::bench_window::{bench_window, windows as both_windows, Windows};
use crate::tolerance::{monte_carlo, temperature_sweep, TemperatureSweep, WorstCase};
use crate::topology::{analyse, synthesise, transfer_curve, Circuit, ParameterKind, Topology, TransferCurve};
use serde::{Deserialize, Serialize};

/// The smallest margin drawn either side of the thresholds, volts: a circuit with little or no
/// hysteresis still shows half a volt of input around its trip points.
pub const CURVE_MARGIN_MIN_V: f64 = 0.5;

/// Thresholds of a circuit, validated first (the fast path: no analysis, no allocation).
pub fn thresholds(circuit: &Topology) -> Result<Thresholds, DesignError> {
    circuit.validate()?;
    circuit.thresholds()
}

/// The input range `(from_v, to_v)` the transfer curve is drawn over: the thresholds widened on
/// each side by the hysteresis, and by at least [`CURVE_MARGIN_MIN_V`]:
/// `VT− − m … VT+ + m`, `m = max(|VT+ − VT−|, 0.5 V)`.
///
/// ```
/// use hysteron_core::analysis::Thresholds;
/// let w = hysteron_core::overview::curve_window(&Thresholds { vt_upper_v: 3.0, vt_lower_v: 2.0 });
/// assert_eq!(w, (1.0, 4.0));
/// ```
pub fn curve_window(t: &Thresholds) -> (f64, f64) {
    let margin_v = (t.vt_upper_v - t.vt_lower_v).abs().max(CURVE_MARGIN_MIN_V);
    (t.vt_lower_v - margin_v, t.vt_upper_v + margin_v)
}

/// The transfer curve over [`curve_window`] (validated thresholds first).
pub fn curve(circuit: &Topology) -> Result<TransferCurve, DesignError> {
    let (from_v, to_v) = curve_window(&thresholds(circuit)?);
    transfer_curve(circuit, from_v, to_v)
}

/// What each keystroke recomputes: the analysis with the record's checks, and the transfer curve.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Quick {
    /// The analysis, or why the design cannot be analysed.
    pub analysis: Result<Analysis, DesignError>,
    /// The transfer curve over [`curve_window`]; `None` when the thresholds cannot be computed.
    pub curve: Option<TransferCurve>,
    /// VT+ and VT− at the field terminal, in front of the record's input network (what the
    /// engineer measures on the wire; [`crate::input_network::from_record::record_network`]):
    /// `None` without a network, the network's error when it cannot be analysed. The analysis
    /// above stays at the trigger's input pin.
    #[serde(default)]
    pub field_terminal: Option<Result<Thresholds, DesignError>>,
}

/// The keystroke path: analysis and transfer curve of the design as it stands, and its
/// thresholds at the field terminal when it has an input network.
pub fn quick(record: &DesignRecord) -> Quick {
    Quick {
        analysis: analyse(&record.circuit, &record.checks),
        curve: curve(&record.circuit).ok(),
        field_terminal: crate::input_network::from_record::record_network(record).map(|r| r.map(|n| n.field)),
    }
}

/// One part as it stood when the design was saved.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SnapshotPart {
    /// Designator (R1...).
    pub designator: String,
    /// What the part does.
    pub label: String,
    /// Value in base units.
    pub value: f64,
}

/// What was computed from the design when it was saved, kept beside the record: the figures the
/// bench was told. The page stores it as it is (its field names are part of the storage layout).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Snapshot {
    /// VT+ at save time, volts.
    pub vt_upper_v: f64,
    /// VT− at save time, volts.
    pub vt_lower_v: f64,
    /// Hysteresis at save time, volts.
    pub hysteresis_v: f64,
    /// The transfer curve at save time.
    pub curve: TransferCurve,
    /// The resistors at save time.
    pub parts: Vec<SnapshotPart>,
    /// The whole part list at save time (values, tolerance, package, ratings, the device line);
    /// absent in snapshots saved before it was kept, or when the design cannot be analysed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub part_list: Option<Bom>,
    /// VT+ and VT− at the field terminal, when the design has an input network that computes
    /// (the figures the bench drives; [`Quick::field_terminal`]); absent otherwise and in
    /// snapshots saved before it was kept.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub field_terminal: Option<Thresholds>,
    /// The design's safety cautions at save time (`safety::cautions_with`), so a view of the saved
    /// figures alone shows them too; empty when there were none, and in snapshots saved before
    /// they were kept.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub cautions: Vec<Caution>,
    /// Version of the math that computed it.
    pub computed_by: String,
}

/// The snapshot kept beside a saved design; `None` when its thresholds cannot be computed.
pub fn snapshot(record: &DesignRecord) -> Option<Snapshot> {
    let c = &record.circuit;
    let t = thresholds(c).ok()?;
    let (from_v, to_v) = curve_window(&t);
    let curve = transfer_curve(c, from_v, to_v).ok()?;
    let parts = c
        .parameters()
        .into_iter()
        .filter(|p| p.kind == ParameterKind::Resistor)
        .map(|p| SnapshotPart { designator: p.designator.unwrap_or_default(), label: p.label, value: p.value })
        .collect();
    let analysis = analyse(c, &record.checks);
    Some(Snapshot {
        vt_upper_v: t.vt_upper_v,
        vt_lower_v: t.vt_lower_v,
        hysteresis_v: t.hysteresis_v(),
        curve,
        parts,
        part_list: analysis.as_ref().ok().and_then(|a| part_list(record, a).ok()),
        field_terminal: crate::input_network::from_record::record_network(record).and_then(|r| r.ok()).map(|n| n.field),
        cautions: crate::safety::cautions_with(record, analysis.as_ref().ok()),
        computed_by: env!("CARGO_PKG_VERSION").to_string(),
    })
}

impl Snapshot {
    /// The one-line summary a list of saved designs shows ([`summary_line`]).
    pub fn summary(&self) -> String {
        summary_line(self.vt_upper_v, self.vt_lower_v, self.field_terminal.as_ref().map(|t| (t.vt_upper_v, t.vt_lower_v)))
    }
}

/// The one-line summary of a saved design's thresholds: VT+ and VT− (volts) where the signal
/// enters — at the field terminal (`field_terminal`, VT+ and VT− there) for a design with an input
/// network, at the trigger's input otherwise.
pub fn summary_line(vt_upper_v: f64, vt_lower_v: f64, field_terminal: Option<(f64, f64)>) -> String {
    match field_terminal {
        Some((up, low)) => format!("at the field terminal VT+ {up:.3} V · VT− {low:.3} V"),
        None => format!("VT+ {vt_upper_v:.3} V · VT− {vt_lower_v:.3} V"),
    }
}

/// One line of VT+, VT− and the hysteresis (volts, four decimals), as the narrow screen's key strip
/// and the first paint's saved figures show them: at the field terminal, with the pin's pair after
/// it, for a design with an input network (`field_terminal`: VT+ and VT− there); at the trigger's
/// input otherwise. The hysteresis is VT+ − VT− where the line's first pair is taken.
pub fn key_line(vt_upper_v: f64, vt_lower_v: f64, hysteresis_v: f64, field_terminal: Option<(f64, f64)>) -> String {
    let volts = |v: f64| format!("{v:.4}\u{a0}V");
    match field_terminal {
        Some((up, low)) => format!(
            "At the field terminal: VT+ {} · VT− {} · hysteresis {} (pin {} / {})",
            volts(up),
            volts(low),
            volts(up - low),
            volts(vt_upper_v),
            volts(vt_lower_v)
        ),
        None => format!("VT+ {} · VT− {} · hysteresis {}", volts(vt_upper_v), volts(vt_lower_v), volts(hysteresis_v)),
    }
}

/// The part list of a record from its analysis (made with the record's checks), with the parts of
/// its oscillator and debouncer. The one place the part list is built.
pub fn part_list(record: &DesignRecord, analysis: &Analysis) -> Result<Bom, DesignError> {
    let mut b = crate::bom::bom(&record.circuit, analysis, &record.checks, &record.parts)?;
    let used: Vec<String> = b.resistors.iter().map(|r| r.designator.clone()).collect();
    b.application =
        crate::bom::application::application_parts(record.application.as_ref(), analysis, &used, &record.parts)?;
    b.regulators = crate::topology::reference::regulator_lines(&record.circuit, &record.checks, &record.parts);
    if let (Some(net), Some(Ok(report))) = (record.input_network.as_ref(), crate::input_network::from_record::record_network(record)) {
        let used: Vec<String> = used.into_iter().chain(b.application.iter().map(|p| p.designator.clone())).chain(b.regulators.iter().map(|r| r.designator.clone())).collect();
        b.input_network = crate::input_network::parts::network_parts(&report, net, &used, &record.parts);
    }
    Ok(b)
}

/// The threshold limits a worst-case study gives.
pub fn bounds_of(worst: Option<&WorstCase>) -> ThresholdBounds {
    worst.map_or_else(ThresholdBounds::default, |w| ThresholdBounds {
        vt_upper_v: Some((w.vt_upper.min.value_v, w.vt_upper.max.value_v)),
        vt_lower_v: Some((w.vt_lower.min.value_v, w.vt_lower.max.value_v)),
    })
}

/// Both named windows of a record with its tolerance settings (defaults when it has none): the
/// field window (`field`, the worst case as stated; computed unless given) and the bench window at
/// every supply its bench procedure sets (see [`crate::tolerance::bench_window`]).
pub fn windows(record: &DesignRecord, analysis: &Analysis, field: Option<&WorstCase>) -> Result<Windows, DesignError> {
    let settings = record.tolerance.clone().unwrap_or_default();
    let supplies = bench_supplies(&record.circuit, analysis);
    match field {
        None => both_windows(&record.circuit, &settings, &supplies),
        Some(f) => {
            let bench = supplies
                .iter()
                .map(|&s| bench_window(&record.circuit, &settings, s))
                .collect::<Result<Vec<_>, _>>()?;
            Ok(Windows { field: f.clone(), bench })
        }
    }
}

/// The windows as the bench procedure prints them.
pub fn reading_windows(w: Option<&Windows>) -> ReadingWindows {
    w.map_or_else(ReadingWindows::default, |w| ReadingWindows {
        field: bounds_of(Some(&w.field)),
        bench: w
            .bench
            .iter()
            .map(|b| SupplyBounds { supply_v: b.supply_v, bounds: bounds_of(Some(&b.worst_case)) })
            .collect(),
    })
}

/// The bench procedure of a record from its analysis, with the field and bench windows when there
/// are any. The one place the bench procedure is built. With an input network the procedure
/// drives the field terminal ([`crate::bench::bench_procedure_through`]); its windows are those
/// of the trigger behind the network ([`terminal_windows`]), computed when `windows` are given
/// (the tolerance study ran); the pin's `windows` serve the optional pin check.
pub fn bench(record: &DesignRecord, analysis: &Analysis, windows: Option<&Windows>) -> BenchProcedure {
    bench_with(record, analysis, windows, field_terminal(record, analysis, windows))
}

/// The trigger behind a record's input network (when it has parts), with its windows at the field
/// terminal (computed only when the pin's `windows` were: the bench quotes both or neither).
fn field_terminal(
    record: &DesignRecord,
    analysis: &Analysis,
    windows: Option<&Windows>,
) -> Option<(crate::input_network::terminal::AtFieldTerminal, Option<Windows>)> {
    let net = record.input_network.as_ref().filter(|n| n.has_parts())?;
    let terminal = crate::input_network::terminal::AtFieldTerminal::new(crate::input_network::from_record::loaded_circuit(record), net.clone());
    let field = windows.and_then(|_| terminal_windows(record, analysis, &terminal).ok());
    Some((terminal, field))
}

/// [`bench`] with the field terminal already worked out ([`field_terminal`]).
fn bench_with(
    record: &DesignRecord,
    analysis: &Analysis,
    windows: Option<&Windows>,
    terminal: Option<(crate::input_network::terminal::AtFieldTerminal, Option<Windows>)>,
) -> BenchProcedure {
    let pin = reading_windows(windows);
    let Some((terminal, field)) = terminal else {
        return bench_procedure_from(&record.circuit, analysis, &record.checks, &pin);
    };
    match crate::bench::bench_procedure_through(&record.circuit, analysis, &record.checks, &pin, &terminal, &reading_windows(field.as_ref())) {
        Ok(p) => p,
        Err(e) => {
            let mut p = bench_procedure_from(&record.circuit, analysis, &record.checks, &pin);
            p.cautions.push(format!("the input network could not be analysed ({e}): this procedure drives the trigger's input pin directly"));
            p
        }
    }
}

/// The field and bench windows at the field terminal of a record with an input network: the worst
/// case of the record's tolerance settings on the trigger behind its network
/// ([`crate::input_network::terminal::AtFieldTerminal`], the network's resistors varied like the
/// trigger's), at the nominal supply and at each supply the bench procedure sets.
pub fn terminal_windows(
    record: &DesignRecord,
    analysis: &Analysis,
    terminal: &crate::input_network::terminal::AtFieldTerminal,
) -> Result<Windows, DesignError> {
    let settings = record.tolerance.clone().unwrap_or_default();
    both_windows(terminal, &settings, &bench_supplies(&record.circuit, analysis))
}

/// The outcome of synthesis: the circuit that reaches the targets and its analysis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Synthesis {
    /// The synthesised circuit (same topology, new part values).
    pub circuit: Topology,
    /// The synthesised circuit's analysis (with the record's checks).
    pub analysis: Analysis,
}

/// Synthesis towards `targets` from the record's circuit, with the result analysed.
pub fn synthesis(record: &DesignRecord, targets: &Targets) -> Result<Synthesis, DesignError> {
    let circuit = synthesise(&record.circuit, targets)?;
    let analysis = analyse(&circuit, &record.checks)?;
    Ok(Synthesis { circuit, analysis })
}

/// Best standard-value combinations for `targets` with the record's search settings (defaults
/// when it has none). The search starts from the synthesised design when there is one (it may
/// have dropped a resistor to meet the targets), else from the design as entered.
pub fn standard_values(
    record: &DesignRecord,
    targets: &Targets,
    synthesised: Option<&Synthesis>,
) -> Result<SearchReport, DesignError> {
    let start = synthesised.map_or(&record.circuit, |s| &s.circuit);
    search(start, targets.thresholds(), &search_settings(record, targets), &record.checks)
}

/// The search settings a record asks for: its own (defaults when it has none), with the targets'
/// current budget as the search's limit when the settings set none — a design asked to draw at
/// most 100 µA is never offered parts that draw more.
pub fn search_settings(record: &DesignRecord, targets: &Targets) -> SearchSettings {
    let mut settings = record.search.clone().unwrap_or_default();
    if settings.current_budget_a.is_none() {
        if let ImpedanceChoice::CurrentBudgetA(a) = targets.impedance {
            settings.current_budget_a = Some(a);
        }
    }
    settings
}

/// A standard-value search for `targets` to run in slices (the page's progress bar and Cancel):
/// the same start and settings as [`standard_values`].
pub fn standard_values_job(
    record: &DesignRecord,
    targets: &Targets,
    synthesised: Option<&Synthesis>,
) -> Result<SearchJob<Topology>, DesignError> {
    let start = synthesised.map_or(&record.circuit, |s| &s.circuit);
    SearchJob::new(start, targets.thresholds(), &search_settings(record, targets), &record.checks)
}

/// VT+ and VT− versus temperature over the record's operating range, with the drift in V/K
/// (the record's tolerance settings, defaults when it has none). The one call the page, the
/// sheet and the command line make for it.
pub fn temperature(record: &DesignRecord) -> Result<TemperatureSweep, DesignError> {
    let settings = record.tolerance.clone().unwrap_or_default();
    let sweep = temperature_sweep(&record.circuit, &settings)?;
    crate::finite::check("temperature", &sweep)?;
    Ok(sweep)
}

/// The line the print sheet and the command line give for the temperature drift.
pub fn temperature_line(record: &DesignRecord, sweep: &TemperatureSweep) -> String {
    sweep.summary(&record.tolerance.clone().unwrap_or_default())
}

/// The slower sections, computed once typing pauses.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Settled {
    /// Thresholds (validated), or why they cannot be computed.
    pub thresholds: Result<Thresholds, DesignError>,
    /// The part list, or why it cannot be made (the analysis's error when that failed).
    pub parts: Result<Bom, DesignError>,
    /// The cautions the design calls for (mains, high voltage...).
    pub cautions: Vec<Caution>,
}

/// The settled path: part list and cautions (and the thresholds, for a read-only view).
pub fn settled(record: &DesignRecord) -> Settled {
    Settled {
        thresholds: thresholds(&record.circuit),
        parts: analyse(&record.circuit, &record.checks).and_then(|a| part_list(record, &a)),
        cautions: cautions(record),
    }
}

/// The two windows of a record for the page's key figures: its analysis, then the field window
/// and the bench window at each supply the bench procedure sets (see [`windows`]).
pub fn record_windows(record: &DesignRecord) -> Result<Windows, DesignError> {
    let a = analyse(&record.circuit, &record.checks)?;
    windows(record, &a, None)
}

/// The print sheet's figures that need no long study.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Sheet {
    /// The analysis with the record's checks.
    pub analysis: Analysis,
    /// The field window (worst case with the record's tolerance settings, defaults when it has
    /// none) and the bench window at each supply the bench procedure sets; `None` when the study
    /// fails.
    pub windows: Option<Windows>,
    /// The bench procedure, accepting by the bench window and quoting the field window.
    pub bench: BenchProcedure,
    /// The part list; `None` when it cannot be made.
    pub parts: Option<Bom>,
    /// The cautions the design calls for.
    pub cautions: Vec<Caution>,
    /// The one line on the temperature drift of VT±; `None` when the sweep fails.
    #[serde(default)]
    pub temperature: Option<String>,
    /// The input network in one line ([`crate::input_network::sheet_line`]): thresholds at the
    /// field terminal, clamp current, filter corner and delay; or why it failed. `None` without a
    /// network.
    #[serde(default)]
    pub input_network: Option<String>,
    /// The output dynamics and power-up state, one line each, when the record has their
    /// settings ([`dynamics_lines`]).
    #[serde(default)]
    pub dynamics: Vec<String>,
    /// VT+ and VT− at the field terminal with their windows, for a record with an input network
    /// that computes; `None` otherwise (the figures above are then where the signal enters).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub field_terminal: Option<TerminalFigures>,
}

/// The thresholds where the bench drives a design with an input network: at its field terminal.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TerminalFigures {
    /// Nominal VT+ and VT− at the field terminal (under the output load; [`Quick::field_terminal`]).
    pub thresholds: Thresholds,
    /// The field and bench windows there ([`terminal_windows`]); `None` when the worst case fails.
    pub windows: Option<Windows>,
}


/// The output-dynamics and power-up studies of a record, each `None` when the record has no
/// settings for it.
#[allow(clippy::type_complexity)]
pub fn dynamics(
    record: &DesignRecord,
) -> (
    Option<Result<crate::output_dynamics::OutputDynamicsReport, DesignError>>,
    Option<Result<crate::power_up::PowerUpReport, DesignError>>,
) {
    (
        record.output_dynamics.as_ref().map(|s| crate::output_dynamics::output_dynamics(&record.circuit, s)),
        record.power_up.as_ref().map(|s| crate::power_up::power_up(&record.circuit, s)),
    )
}

/// The print sheet's lines on output dynamics and power-up state (a study that fails says so).
pub fn dynamics_lines(record: &DesignRecord) -> Vec<String> {
    let (od, pu) = dynamics(record);
    let mut lines = Vec::new();
    match od {
        Some(Ok(r)) => lines.push(crate::output_dynamics::summary_line(&r)),
        Some(Err(e)) => lines.push(format!("output dynamics: {e}")),
        None => {}
    }
    match pu {
        Some(Ok(r)) => lines.push(crate::power_up::summary_line(&r)),
        Some(Err(e)) => lines.push(format!("power-up state: {e}")),
        None => {}
    }
    lines
}

/// The SPICE deck of a record: the design's netlist with its input network
/// ([`crate::input_network::spice::dress`]; the deck's thresholds and test ramp are then at the
/// field terminal) and its output dynamics ([`crate::output_dynamics::dress`]; thresholds under
/// load when there is no input network) when it has them; else exactly [`crate::spice::to_spice`].
pub fn spice(record: &DesignRecord) -> Result<String, DesignError> {
    use crate::netlist::Netlisted;
    if record.input_network.is_none() && record.output_dynamics.is_none() {
        return crate::spice::to_spice(&record.circuit, &record.name);
    }
    let circuit = &record.circuit;
    circuit.validate()?;
    let mut net = circuit.netlist();
    let mut extra = String::new();
    let mut thresholds = circuit.thresholds().map(|t| (t.vt_upper_v, t.vt_lower_v))?;
    if let Some(s) = &record.output_dynamics {
        s.validate()?;
        if let Some(c) = circuit.with_output_load(&s.load()) {
            thresholds = c.thresholds().map(|t| (t.vt_upper_v, t.vt_lower_v))?;
        }
    }
    let parts = match &record.input_network {
        Some(_) => part_list(record, &crate::topology::analyse(circuit, &record.checks)?)?.input_network,
        None => Vec::new(),
    };
    if let Some(d) = crate::input_network::spice::dress(record, &parts, &mut net)? {
        thresholds = (d.vt_upper_v, d.vt_lower_v);
        extra.push('\n');
        extra.push_str(&d.extra);
    }
    if let Some(s) = &record.output_dynamics {
        extra.push_str(&crate::output_dynamics::dress(circuit, s, &mut net));
    }
    let (upper, lower) = thresholds;
    let (lo, hi) = crate::spice::ramp_span_v(upper, lower);
    crate::finite::check("spice", &([upper, lower], [lo, hi], &net))?;
    let deck = crate::spice::write_deck(&net, &record.name, upper, lower, lo, hi);
    let body = deck.strip_suffix(".end\n").unwrap_or(&deck);
    Ok(format!("{body}{extra}.end\n"))
}

/// The print sheet's content; fails when the design cannot be analysed or any number on the
/// sheet is not finite (such a design gets no bench sheet, see [`crate::finite`]).
pub fn sheet(record: &DesignRecord) -> Result<Sheet, DesignError> {
    let analysis = analyse(&record.circuit, &record.checks)?;
    crate::finite::check("analysis", &analysis)?;
    let windows = windows(record, &analysis, None).ok();
    // The field terminal's windows are worked out once, for the bench steps and the figures table.
    let terminal = field_terminal(record, &analysis, windows.as_ref());
    let field_windows = terminal.as_ref().and_then(|(_, w)| w.clone());
    let bench = bench_with(record, &analysis, windows.as_ref(), terminal);
    crate::finite::check("bench", &bench)?;
    let parts = part_list(record, &analysis).ok();
    let temperature = temperature(record).ok().map(|t| temperature_line(record, &t));
    let input_network = crate::input_network::from_record::record_network(record).map(|r| match r {
        Ok(r) => crate::input_network::sheet_line(&r),
        Err(e) => format!("Input network: {e}"),
    });
    let dynamics = dynamics_lines(record);
    // The nominal figures there are the network study's (`None` when it cannot be analysed: its
    // line on the sheet says why).
    let field_terminal = record
        .input_network
        .as_ref()
        .filter(|n| n.has_parts())
        .and_then(|_| crate::input_network::from_record::record_network(record)?.ok())
        .map(|n| TerminalFigures { thresholds: n.field, windows: field_windows });
    Ok(Sheet { bench, parts, cautions: cautions(record), windows, analysis, temperature, input_network, dynamics, field_terminal })
}

/// The print sheet's longer studies.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SheetStudies {
    /// Monte Carlo yield in the spec window: `(fraction, trials)`; `None` without a spec window
    /// or when the study fails.
    pub spec_yield: Option<(f64, u64)>,
    /// The signal test summary, when the record has signal settings and the study succeeds.
    pub signal: Option<SignalReport>,
}

/// The print sheet's Monte Carlo yield (at most `max_trials` trials, to keep printing quick) and
/// signal test.
pub fn sheet_studies(record: &DesignRecord, max_trials: u64) -> SheetStudies {
    let mut settings = record.tolerance.clone().unwrap_or_default();
    settings.monte_carlo.trials = settings.monte_carlo.trials.min(max_trials);
    let spec_yield =
        monte_carlo(&record.circuit, &settings).ok().and_then(|m| m.spec_yield.map(|y| (y.fraction, m.trials)));
    let signal = record.signal.as_ref().and_then(|s| crate::input_network::from_record::record_signal(record, s).ok());
    SheetStudies { spec_yield, signal }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::catalog::templates;

    #[test]
    fn the_key_line_takes_the_terminal_pair_first_when_there_is_one() {
        let plain = key_line(2.5, 1.25, 1.25, None);
        assert_eq!(plain, "VT+ 2.5000\u{a0}V · VT− 1.2500\u{a0}V · hysteresis 1.2500\u{a0}V");
        let terminal = key_line(2.5, 1.25, 1.25, Some((12.0, 6.5)));
        assert!(terminal.starts_with("At the field terminal: VT+ 12.0000\u{a0}V · VT− 6.5000\u{a0}V · hysteresis 5.5000\u{a0}V"), "{terminal}");
        assert!(terminal.ends_with("(pin 2.5000\u{a0}V / 1.2500\u{a0}V)"), "{terminal}");
    }

    fn inverting() -> DesignRecord {
        templates().into_iter().find(|t| t.record().circuit.name() == "inverting").unwrap().record()
    }

    #[test]
    fn curve_window_is_the_hysteresis_or_half_a_volt_each_side() {
        // Wide loop: the margin is the hysteresis itself.
        assert_eq!(curve_window(&Thresholds { vt_upper_v: 4.0, vt_lower_v: 1.0 }), (-2.0, 7.0));
        // Narrow loop: half a volt each side.
        assert_eq!(curve_window(&Thresholds { vt_upper_v: 2.1, vt_lower_v: 2.0 }), (1.5, 2.6));
        // An inverted pair (VT+ below VT−, as a miswired design may give) still widens outward by |ΔV|.
        assert_eq!(curve_window(&Thresholds { vt_upper_v: 1.0, vt_lower_v: 3.0 }), (1.0, 3.0));
    }

    #[test]
    fn quick_and_snapshot_agree_with_the_analysis() {
        let r = inverting();
        let q = quick(&r);
        let a = q.analysis.as_ref().unwrap();
        let s = snapshot(&r).unwrap();
        assert_eq!((s.vt_upper_v, s.vt_lower_v), (a.vt_upper_v, a.vt_lower_v));
        assert_eq!(q.curve.as_ref(), Some(&s.curve));
        let (from_v, _) = curve_window(&thresholds(&r.circuit).unwrap());
        assert_eq!(s.curve.rising.first().map(|p| p.vin_v), Some(from_v));
        assert_eq!(s.parts.len(), r.circuit.parameters().iter().filter(|p| p.kind == ParameterKind::Resistor).count());
        // The whole part list is kept too, the same as the settled path builds it.
        assert_eq!(s.part_list.as_ref(), settled(&r).parts.as_ref().ok());
        // A snapshot stored before the part list was kept still reads.
        let mut old = serde_json::to_value(&s).unwrap();
        old.as_object_mut().unwrap().remove("part_list");
        let back: Snapshot = serde_json::from_value(old).unwrap();
        assert_eq!(back.part_list, None);
    }

    #[test]
    fn quick_carries_the_field_terminal_thresholds_of_the_input_network() {
        let r = crate::catalog::demos().into_iter().find(|s| s.key == "sawmill-end-stop").unwrap().record();
        let q = quick(&r);
        let field = q.field_terminal.clone().expect("the demo has a network").unwrap();
        // The same figures as the Input network study (under the output load), not the pin's.
        let report = crate::input_network::from_record::record_network(&r).unwrap().unwrap();
        assert_eq!(field, report.field);
        let pin = q.analysis.as_ref().unwrap();
        assert!(field.vt_upper_v > 3.0 * pin.vt_upper_v, "field {field:?}, pin {}", pin.vt_upper_v);
        // Without a network the field terminal is the pin: nothing extra.
        assert_eq!(quick(&DesignRecord { input_network: None, ..r.clone() }).field_terminal, None);
        // A network that cannot be analysed reports its error, and the pin figures stay.
        let mut bad = r.clone();
        if let Some(n) = bad.input_network.as_mut() {
            n.series_ohm = Some(-1.0);
        }
        let q = quick(&bad);
        assert!(matches!(q.field_terminal, Some(Err(_))) && q.analysis.is_ok());
    }

    #[test]
    fn sheet_quotes_the_field_terminal_with_the_windows_the_bench_accepts_by() {
        let r = crate::catalog::demos().into_iter().find(|s| s.key == "sawmill-end-stop").unwrap().record();
        let sh = sheet(&r).unwrap();
        let t = sh.field_terminal.as_ref().expect("the demo has a network");
        assert_eq!(Some(t.thresholds), quick(&r).field_terminal.and_then(|x| x.ok()));
        let w = t.windows.as_ref().expect("windows compute");
        // The bench step's accept range for VT+ at the nominal supply is this bench window.
        let b = &w.bench[0];
        let (lo, hi) = b.vt_upper_v();
        let step = format!("accept {:.3} V … {:.3} V", lo, hi);
        assert!(sh.bench.steps.iter().any(|s| s.instruction.contains(&step)), "no bench step accepts by {step}");
        assert!(lo < t.thresholds.vt_upper_v && t.thresholds.vt_upper_v < hi);
        // Without a network there is no terminal block.
        assert!(sheet(&DesignRecord { input_network: None, ..r.clone() }).unwrap().field_terminal.is_none());
    }

    #[test]
    fn snapshot_summary_quotes_the_field_terminal_when_there_is_a_network() {
        let r = crate::catalog::demos().into_iter().find(|s| s.key == "sawmill-end-stop").unwrap().record();
        let snap = snapshot(&r).expect("the demo computes");
        let field = quick(&r).field_terminal.expect("network").expect("computes");
        assert_eq!(snap.field_terminal, Some(field));
        let line = snap.summary();
        assert!(line.starts_with("at the field terminal") && line.contains(&format!("{:.3}", field.vt_upper_v)), "{line}");
        let plain = snapshot(&DesignRecord { input_network: None, ..r.clone() }).unwrap();
        assert_eq!(plain.field_terminal, None);
        assert_eq!(plain.summary(), format!("VT+ {:.3} V · VT− {:.3} V", plain.vt_upper_v, plain.vt_lower_v));
    }

    #[test]
    fn a_broken_design_fails_every_path_with_the_same_error() {
        let mut r = inverting();
        if let Topology::Inverting(c) = &mut r.circuit {
            c.rf_ohm = -1.0;
        }
        let q = quick(&r);
        assert!(q.analysis.is_err() && q.curve.is_none());
        assert!(snapshot(&r).is_none());
        let s = settled(&r);
        assert_eq!(s.parts.unwrap_err(), q.analysis.clone().unwrap_err());
        assert_eq!(sheet(&r).unwrap_err(), q.analysis.unwrap_err());
    }

    #[test]
    fn sheet_bench_bands_come_from_the_bench_window() {
        let r = inverting();
        let s = sheet(&r).unwrap();
        let w = s.windows.as_ref().unwrap();
        let upper = s.bench.readings.iter().find(|x| x.nominal_v == s.analysis.vt_upper_v).unwrap();
        let (lo, hi) = w.bench[0].vt_upper_v();
        assert_eq!(w.bench[0].supply_v, r.circuit.supply_v());
        assert!(upper.accepts(lo) && upper.accepts(hi));
        assert_eq!((upper.bench_min_v, upper.bench_max_v), (Some(lo), Some(hi)));
        assert_eq!((upper.field_min_v, upper.field_max_v), (Some(w.field.vt_upper.min.value_v), Some(w.field.vt_upper.max.value_v)));
        // The field window (±5 % supply, 0–70 °C drift by default) is wider than the bench window.
        assert!(w.field.vt_upper.min.value_v < lo && hi < w.field.vt_upper.max.value_v);
        assert!(s.parts.is_some());
        let studies = sheet_studies(&r, 200);
        if let Some((f, n)) = studies.spec_yield {
            assert!((0.0..=1.0).contains(&f) && n <= 200);
        }
    }

    #[test]
    fn windows_reuse_a_given_field_window() {
        let r = inverting();
        let a = analyse(&r.circuit, &r.checks).unwrap();
        let fresh = windows(&r, &a, None).unwrap();
        let reused = windows(&r, &a, Some(&fresh.field)).unwrap();
        assert_eq!(fresh, reused);
    }
}
