//! [`Circuit::with_parameters_into`] against [`Circuit::with_parameters`]: for every topology's
//! template and every demo, the same circuit (or the same refusal) whatever the scratch circuit held
//! before, including a circuit of another topology and one left behind by a refused draw.

use super::{Circuit, Topology};
use crate::catalog::{demos, templates};
use crate::rng::Rng;

fn circuits() -> Vec<Topology> {
    templates().iter().chain(demos().iter()).map(|s| s.record().circuit).collect()
}

/// Parameter values around the nominal ones, now and then far off or not a number, so that both
/// accepted and refused draws occur.
fn draw(nominal: &[f64], rng: &mut Rng) -> Vec<f64> {
    nominal
        .iter()
        .map(|&v| match rng.next_u64() % 16 {
            0 => f64::NAN,
            1 => -v,
            2 => v * 1e9,
            _ => v * rng.uniform_in(0.7, 1.3),
        })
        .collect()
}

#[test]
fn writes_the_same_circuit_as_with_parameters() {
    let all = circuits();
    assert!(all.len() >= 8, "templates and demos: {}", all.len());
    let mut rng = Rng::new(0x5eed_1a70);
    let (mut accepted, mut refused) = (0, 0);
    for (k, circuit) in all.iter().enumerate() {
        let nominal: Vec<f64> = circuit.parameters().iter().map(|p| p.value).collect();
        // Start from each circuit in turn (other topologies, and the same topology with other
        // parts, rails and device), then keep whatever the previous draw left.
        for (start, other) in all.iter().enumerate() {
            let mut scratch = other.clone();
            for _ in 0..30 {
                let values = draw(&nominal, &mut rng);
                let expected = circuit.with_parameters(&values);
                let got = circuit.with_parameters_into(&values, &mut scratch);
                match (&expected, got) {
                    (Ok(c), Ok(())) => {
                        // Compared by their Debug text, which prints every value exactly (and a NaN
                        // draw as NaN, which `==` would call different from itself).
                        assert_eq!(format!("{scratch:?}"), format!("{c:?}"), "{} with {values:?}", circuit.name());
                        accepted += 1;
                    }
                    (Err(a), Err(b)) => {
                        assert_eq!(a.to_string(), b.to_string(), "{}", circuit.name());
                        refused += 1;
                    }
                    (e, g) => panic!("{} (scratch {start}): with_parameters {e:?}, with_parameters_into {g:?}", circuit.name()),
                }
            }
        }
        // The wrong number of values is refused the same way.
        let short = &nominal[..nominal.len() - 1];
        let mut scratch = all[k].clone();
        assert_eq!(
            circuit.with_parameters(short).map(|_| ()).map_err(|e| e.to_string()),
            circuit.with_parameters_into(short, &mut scratch).map_err(|e| e.to_string())
        );
    }
    assert!(accepted > 3000 && refused > 100, "accepted {accepted}, refused {refused}");
}
