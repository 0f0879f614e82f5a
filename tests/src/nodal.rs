//! Nodal analysis of a resistive network, the independent reference for threshold checks: nodes are
//! either held at a known voltage or unknown, and Kirchhoff's current law at each unknown node,
//! Σ G·(Vn − Vm) + I_drawn = 0, is solved with an LU decomposition (nalgebra, a general-purpose
//! linear-algebra library). Conductances are scaled by R0 = 10 kΩ for conditioning.

use nalgebra::{DMatrix, DVector};

/// A resistive network under construction: nodes, resistors between them and currents drawn out of
/// them.
#[derive(Default)]
pub struct Nodal {
    known: Vec<Option<f64>>,
    resistors: Vec<(usize, usize, f64)>,
    draws: Vec<(usize, f64)>,
}

impl Nodal {
    /// An empty network.
    pub fn new() -> Self {
        Self::default()
    }
    /// A node held at `volts` (a source or a rail); returns its index.
    pub fn held(&mut self, volts: f64) -> usize {
        self.known.push(Some(volts));
        self.known.len() - 1
    }
    /// A node whose voltage the solve finds; returns its index.
    pub fn free(&mut self) -> usize {
        self.known.push(None);
        self.known.len() - 1
    }
    /// A resistor of `ohm` between nodes `a` and `b`.
    pub fn r(&mut self, a: usize, b: usize, ohm: f64) {
        self.resistors.push((a, b, ohm));
    }
    /// Current drawn out of node `a` (an input bias current into a device pin), amperes.
    pub fn draw(&mut self, a: usize, amps: f64) {
        self.draws.push((a, amps));
    }
    /// Every node's voltage, held ones included. Panics when the network is singular (a free node
    /// with no path to a held one), which is a mistake in the test that built it.
    pub fn solve(&self) -> Vec<f64> {
        const R0: f64 = 1e4;
        let unknown: Vec<usize> = (0..self.known.len()).filter(|&i| self.known[i].is_none()).collect();
        let row = |node: usize| unknown.iter().position(|&u| u == node);
        let n = unknown.len();
        let mut g = DMatrix::<f64>::zeros(n, n);
        let mut rhs = DVector::<f64>::zeros(n);
        for &(a, b, ohm) in &self.resistors {
            let y = R0 / ohm;
            for (this, other) in [(a, b), (b, a)] {
                if let Some(i) = row(this) {
                    g[(i, i)] += y;
                    match (row(other), self.known[other]) {
                        (Some(j), _) => g[(i, j)] -= y,
                        (None, Some(v)) => rhs[i] += y * v,
                        (None, None) => unreachable!("a node is either held or free"),
                    }
                }
            }
        }
        for &(a, amps) in &self.draws {
            if let Some(i) = row(a) {
                rhs[i] -= amps * R0;
            }
        }
        let x = g.lu().solve(&rhs).expect("network matrix is singular");
        let mut v: Vec<f64> = self.known.iter().map(|k| k.unwrap_or(0.0)).collect();
        for (k, &node) in unknown.iter().enumerate() {
            v[node] = x[k];
        }
        v
    }
}
