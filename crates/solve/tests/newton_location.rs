//! A non-finite residual names the first unknown where it appears, so that a driver can say
//! which node, field and cells are involved.

use std::sync::Arc;

use dilata_linalg::{CsrMatrix, CsrPattern, DirectParams, FaerLu, LinearSolver, Ordering};
use dilata_solve::newton::{newton, DiscreteSystem, NewtonError, NewtonParams};

#[derive(Debug, thiserror::Error)]
#[error("never")]
struct Never;

/// `r_i = x_i − 1`, except that unknown `bad` gets `sqrt(x − 2)`, NaN for x < 2.
struct Poisoned {
    pattern: Arc<CsrPattern>,
    bad: usize,
}

impl Poisoned {
    fn residual(&self, x: &[f64], r: &mut [f64]) {
        for i in 0..x.len() {
            r[i] = if i == self.bad {
                (x[i] - 2.0).sqrt()
            } else {
                x[i] - 1.0
            };
        }
    }
}

impl DiscreteSystem for Poisoned {
    type Error = Never;
    fn n_dofs(&self) -> usize {
        self.pattern.n_rows
    }
    fn pattern(&self) -> Arc<CsrPattern> {
        self.pattern.clone()
    }
    fn impose_constraints(&self, _x: &mut [f64]) {}
    fn assemble_into(&mut self, x: &[f64], j: &mut CsrMatrix, r: &mut [f64]) -> Result<(), Never> {
        j.values.iter_mut().for_each(|v| *v = 1.0);
        self.residual(x, r);
        Ok(())
    }
    fn residual_into(&mut self, x: &[f64], r: &mut [f64]) -> Result<(), Never> {
        self.residual(x, r);
        Ok(())
    }
}

#[test]
fn a_nan_residual_is_reported_with_its_unknown() {
    let n = 5;
    let mut sys = Poisoned {
        pattern: Arc::new(CsrPattern::from_rows(n, (0..n).map(|i| vec![i]).collect())),
        bad: 3,
    };
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Natural));
    solver.analyze(&sys.pattern).unwrap();
    let mut x = vec![0.0; n];
    let err = newton(&mut sys, &mut solver, &mut x, &NewtonParams::default()).unwrap_err();
    match &err {
        NewtonError::NonFinite { iteration, dof } => {
            assert_eq!(*iteration, 0);
            assert_eq!(*dof, Some(3));
        }
        other => panic!("expected a non-finite residual, got {other}"),
    }
    assert!(err.to_string().contains("dof 3"), "{err}");
}
