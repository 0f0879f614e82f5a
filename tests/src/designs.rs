//! A variety of designs covering every topology and its optional parts, shared by the export checks.

use hysteron_core::device::{Comparator, Rail};
use hysteron_core::topology::bjt_pair::EmitterCoupledSchmitt;
use hysteron_core::topology::cmos_buffer::{BiasRail, CmosBufferSchmitt, CmosGate};
use hysteron_core::topology::inverting::InvertingSchmitt;
use hysteron_core::topology::noninverting::{NonInvertingSchmitt, Reference};
use hysteron_core::topology::open_drain::OpenDrainSchmitt;
use hysteron_core::topology::plain::PlainComparator;
use hysteron_core::topology::schmitt_gate::{SchmittGate, SchmittInput};
use hysteron_core::topology::supply_monitor::{MonitorOutput, MonitorSupply, SupplyMonitor};
use hysteron_core::topology::Topology;

/// Every template and demo, and variants that exercise each optional part and form of every
/// topology (fixed references, split supplies, open-drain forms, self-supplied monitors, gates
/// with and without networks, the two-transistor trigger with a load). Non-ideal devices
/// (offset, bias currents of both signs, built-in hysteresis, output headroom, source resistance)
/// so that every modelled effect is present.
pub fn variety() -> Vec<(String, Topology)> {
    let mut v: Vec<(String, Topology)> = hysteron_core::catalog::templates()
        .into_iter()
        .chain(hysteron_core::catalog::demos())
        .map(|s| (s.key.to_string(), s.record().circuit))
        .collect();
    let real = Comparator {
        source_resistance_ohm: 2.2e3,
        bias_plus_a: 30e-9,
        bias_minus_a: -20e-9,
        offset_v: 3e-3,
        builtin_hysteresis_v: 4e-3,
        output_high_drop_v: 0.15,
        output_low_rise_v: 0.08,
        ..Comparator::ideal(5.0)
    };
    let split = Comparator { negative_rail_v: -5.0, ..real };
    v.push(("inverting split".into(), Topology::Inverting(InvertingSchmitt::split_supply(10e3, 47e3, split))));
    v.push((
        "inverting fixed".into(),
        Topology::Inverting(InvertingSchmitt {
            ra_ohm: None,
            rail_b: Rail::Fixed(1.2),
            ..InvertingSchmitt::single_supply(1.0, 10e3, 47e3, real)
        }),
    ));
    v.push((
        "non-inverting fixed".into(),
        Topology::NonInverting(NonInvertingSchmitt::with_fixed_reference(10e3, 100e3, 1.2, real)),
    ));
    v.push((
        "non-inverting split".into(),
        Topology::NonInverting(NonInvertingSchmitt::with_divider(10e3, 100e3, 33e3, 47e3, split)),
    ));
    v.push((
        "open-drain non-inverting".into(),
        Topology::OpenDrain(OpenDrainSchmitt {
            rl_ohm: Some(47e3),
            sink_resistance_ohm: 25.0,
            pullup_rail: Rail::Fixed(3.3),
            ..OpenDrainSchmitt::non_inverting(10e3, 100e3, Reference::divider(20e3, 30e3), 4.7e3, real)
        }),
    ));
    v.push((
        "plain inverting".into(),
        Topology::Plain(PlainComparator {
            sense: hysteron_core::analysis::Sense::Inverting,
            reference: Reference::divider(10e3, 15e3),
            device: real,
        }),
    ));
    let mut mon = SupplyMonitor::undervoltage(1e5, 27e3, 1e6, 2.5, real);
    mon.comparator_supply = MonitorSupply::FromMonitoredRail { dropout_v: 0.3 };
    v.push(("monitor self-supplied".into(), Topology::SupplyMonitor(mon.clone())));
    mon.output = MonitorOutput::OpenDrain { rpu_ohm: 10e3, pullup_rail: Rail::Fixed(3.3) };
    v.push(("monitor self-supplied open-drain".into(), Topology::SupplyMonitor(mon)));
    let gate = CmosGate { supply_v: 3.3, output_high_drop_v: 0.05, output_low_v: 0.04, ..CmosGate::default() };
    v.push(("cmos".into(), Topology::CmosBuffer(CmosBufferSchmitt::new(10e3, 47e3, gate))));
    v.push((
        "cmos r3".into(),
        Topology::CmosBuffer(CmosBufferSchmitt {
            r3_ohm: Some(82e3),
            r3_rail: BiasRail::Supply,
            ..CmosBufferSchmitt::new(10e3, 47e3, gate)
        }),
    ));
    v.push(("gate bare".into(), Topology::SchmittGate(SchmittGate::bare(SchmittInput::default()))));
    v.push((
        "gate network".into(),
        Topology::SchmittGate(SchmittGate {
            ra_ohm: Some(47e3),
            rb_ohm: Some(100e3),
            rc_ohm: Some(220e3),
            gate: SchmittInput { inverting: false, ..SchmittInput::default() },
        }),
    ));
    v.push((
        "bjt".into(),
        Topology::BjtPair(EmitterCoupledSchmitt {
            load_ohm: Some(10e3),
            ..EmitterCoupledSchmitt::new(12.0, 10e3, 10e3, 4.7e3, 2.2e3, 1.5e3)
        }),
    ));
    v
}
