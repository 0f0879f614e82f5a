//! # hysteron-core
//!
//! Topology math and signal simulation for two-threshold switching circuits: Schmitt triggers and
//! comparators with hysteresis. Plain data in, plain data out; no browser, no I/O.
//!
//! ```
//! use hysteron_core::device::Comparator;
//! use hysteron_core::topology::{inverting::InvertingSchmitt, Circuit};
//! let c = InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0));
//! let t = c.thresholds().unwrap();
//! assert!((t.vt_upper_v - 3.0).abs() < 1e-12);
//! assert!((t.vt_lower_v - 2.0).abs() < 1e-12);
//! ```
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod analysis;
pub mod catalog;
pub mod device;
pub mod drift;
pub mod error;
pub mod finite;
pub mod limits;
pub mod evaluate;
pub mod overview;
pub mod stream;
pub mod record;
pub mod rng;
pub mod safety;
pub mod topology;
pub mod tolerance;
pub mod signal;
pub mod eseries;
pub mod notation;
pub mod search;
pub mod bom;
pub mod csv_text;
pub mod share;
pub mod netlist;
pub mod spice;
pub mod schematic;
pub mod bench;
pub mod jobs;
pub mod job_answers;
pub mod job_rounds;
pub mod input_network;
pub mod output_dynamics;
pub mod power_up;
