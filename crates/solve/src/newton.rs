//! Newton's method with backtracking line search, generic over a discrete system.

use std::sync::Arc;

use dilata_linalg::{CsrMatrix, CsrPattern, LinalgError, LinearSolver, RowTransform};

/// A discrete nonlinear system `R(x) = 0` with a Jacobian on a fixed pattern.
///
/// Constrained DOFs are handled by the system: [`DiscreteSystem::impose_constraints`] writes the
/// prescribed values into `x`, after which the residual and Jacobian rows of constrained DOFs
/// must describe a zero correction (identity row, zero residual).
pub trait DiscreteSystem {
    type Error: std::error::Error + Send + Sync + 'static;
    fn n_dofs(&self) -> usize;
    fn pattern(&self) -> Arc<CsrPattern>;
    fn impose_constraints(&self, x: &mut [f64]);
    /// Residual and Jacobian at `x`.
    fn assemble_into(
        &mut self,
        x: &[f64],
        jacobian: &mut CsrMatrix,
        residual: &mut [f64],
    ) -> Result<(), Self::Error>;
    /// Residual only (used by the line search).
    fn residual_into(&mut self, x: &[f64], residual: &mut [f64]) -> Result<(), Self::Error>;
    /// Jacobian at `x` when `residual` already holds the residual at this very `x` (the
    /// accepted point of the line search); on return it must still hold it. Default:
    /// [`DiscreteSystem::assemble_into`], which computes the residual again, to the values of
    /// `residual_into`; systems whose cell loop can form the matrix alone override it, leave
    /// `residual` untouched and save the residual's share of the pass.
    fn jacobian_into(
        &mut self,
        x: &[f64],
        jacobian: &mut CsrMatrix,
        residual: &mut [f64],
    ) -> Result<(), Self::Error> {
        self.assemble_into(x, jacobian, residual)
    }
    /// Ranges of unknowns measured separately by the convergence test (one per field, since
    /// fields carry different units). Default: one block.
    fn blocks(&self) -> Vec<std::ops::Range<usize>> {
        std::iter::once(0..self.n_dofs()).collect()
    }
    /// For each block, a magnitude of its unknowns (in their units) that the step test uses as
    /// a floor: a correction is negligible when it is below `step_tol · max(|x_b|, scale_b)`.
    /// It matters for blocks whose exact solution is zero (a clamped displacement field).
    /// Default: no floor.
    fn block_scales(&self) -> Vec<f64> {
        vec![0.0; self.blocks().len()]
    }
    /// Whether Newton may keep the factorised Jacobian of an earlier iteration of the same solve
    /// (chord steps) while the residual still falls fast, refactoring only when it does not.
    /// Worth it when factorising costs much more than a residual. Default: refactor every
    /// iteration (plain Newton).
    fn reuse_jacobian(&self) -> bool {
        false
    }
    /// A row rearrangement that makes the Jacobian nearly symmetric, handed to the linear
    /// solver before every factorisation (see `dilata_linalg::symmetric_form`). Default: none.
    fn row_transform(&self) -> Option<RowTransform> {
        None
    }
}

/// Newton parameters. Converged when, for every block of unknowns (see
/// [`DiscreteSystem::blocks`]), the residual (max norm over the block) satisfies
/// `|R| <= abs_tol` or `|R| <= rel_tol · |R_0|` (`R_0` that block's residual at the first guess
/// after the prescribed values are imposed), or a full Newton step was taken whose size over the
/// block is at most `step_tol · max(|x|, scale)` (max norms; `scale` from
/// [`DiscreteSystem::block_scales`]): near the solution Newton converges quadratically, so the remaining error is of
/// the order of the square of that step. The step test matters when the first guess is already
/// good (a time step from a predictor), where `R_0` is tiny and the relative test is out of
/// reach of round-off.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct NewtonParams {
    pub abs_tol: f64,
    pub rel_tol: f64,
    pub step_tol: f64,
    pub max_iterations: usize,
    /// Maximum number of step halvings in the backtracking line search (0: full steps).
    pub max_backtracks: usize,
}

impl Default for NewtonParams {
    fn default() -> Self {
        NewtonParams {
            abs_tol: 1e-10,
            rel_tol: 1e-10,
            step_tol: 1e-12,
            max_iterations: 25,
            max_backtracks: 8,
        }
    }
}

/// What a converged Newton solve did.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct NewtonInfo {
    pub iterations: usize,
    /// Jacobian factorisations performed (equal to `iterations` unless the system allows
    /// chord steps).
    pub factorizations: usize,
    /// Residual norm (max norm) before each iteration and at the end.
    pub residual_norms: Vec<f64>,
    pub backtracks: usize,
}

/// Why Newton failed. All variants are recoverable by a caller that can cut a time step.
#[derive(Debug, thiserror::Error)]
pub enum NewtonError<E: std::error::Error + 'static> {
    #[error("Newton did not converge in {iterations} iterations (residual {residual:e})")]
    NotConverged { iterations: usize, residual: f64 },
    /// The line search found no decrease of the merit even at its shortest step (see
    /// [`newton`]): the iteration has stalled.
    #[error(
        "Newton stalled at iteration {iteration}: no decrease along the correction even at \
         step length {alpha:e} (residual {residual:e})"
    )]
    Stalled {
        iteration: usize,
        alpha: f64,
        residual: f64,
    },
    /// `dof`: the first unknown whose residual (or correction) is not finite, where known.
    #[error("non-finite residual at iteration {iteration}{}", at_dof(*.dof))]
    NonFinite {
        iteration: usize,
        dof: Option<usize>,
    },
    /// `dof`: the unknown whose row holds the first entry of the Jacobian that is not finite
    /// (an overflowing material law, say). Found before the linear solve, which would only call
    /// the matrix singular.
    #[error("non-finite Jacobian entry at iteration {iteration} (first in the row of dof {dof})")]
    NonFiniteJacobian { iteration: usize, dof: usize },
    #[error("linear solve failed: {0}")]
    Linear(#[from] LinalgError),
    #[error(transparent)]
    System(E),
}

fn at_dof(dof: Option<usize>) -> String {
    dof.map_or(String::new(), |d| format!(" (first at dof {d})"))
}

/// Index of the first entry that is not finite.
fn first_non_finite(v: &[f64]) -> Option<usize> {
    v.iter().position(|x| !x.is_finite())
}

/// [`NewtonError::NonFiniteJacobian`] for the first row of `jac` with an entry that is not
/// finite, if any.
fn check_jacobian<E: std::error::Error>(
    jac: &CsrMatrix,
    iteration: usize,
) -> Result<(), NewtonError<E>> {
    // A block with a term that is not finite has a sum that is not finite: one branch per
    // block of values instead of one per value. (If finite terms only overflow in the sum, the
    // search below runs on from that block to the end of the values.)
    const BLOCK: usize = 1024;
    let Some(block) = jac
        .values
        .chunks(BLOCK)
        .position(|b| !b.iter().sum::<f64>().is_finite())
    else {
        return Ok(());
    };
    let Some(k) = jac.values[block * BLOCK..]
        .iter()
        .position(|v| !v.is_finite())
        .map(|k| k + block * BLOCK)
    else {
        return Ok(());
    };
    let dof = jac.pattern.row_ptr.partition_point(|&start| start <= k) - 1;
    Err(NewtonError::NonFiniteJacobian { iteration, dof })
}

fn max_norm(v: &[f64]) -> f64 {
    // `f64::max` drops a NaN operand, so a NaN must stick explicitly once seen.
    v.iter().fold(0.0_f64, |m, x| {
        if m.is_nan() || x.is_nan() {
            f64::NAN
        } else {
            m.max(x.abs())
        }
    })
}

/// Solve `R(x) = 0` starting from `x`. The solver must have been analysed on the system's pattern
/// (its symbolic analysis is reused for every iteration).
///
/// Each iteration factors the Jacobian, solves for the correction and measures the residual at
/// the new point (the line search's own evaluation); the Jacobian is assembled again only when
/// another iteration is needed, so a linear problem costs one matrix assembly, one
/// factorisation and two residual evaluations.
///
/// Each iteration tells the solver (through [`LinearSolver::set_requested_reduction`]) the
/// residual reduction `η_k` it needs, for an inexact Newton method in the sense of Eisenstat
/// and Walker (SIAM J. Sci. Comput. 17 (1996) 16, "choice 2", from memory): `η_1 =
/// FIRST_FORCING` and `η_k = γ (m_k / m_(k-1))²` afterwards (`m` the scaled residual of the
/// line search over all blocks, `γ = 0.9`), at most `MAX_FORCING`, and exact (the solver's own
/// tolerance) once `m_k` is below `EXACT_BELOW`. Far from the solution an
/// exact solve buys nothing that the next Newton iteration keeps; near it the ratio falls
/// quadratically and so does `η`, so the last iterations solve as tightly as the solver's own
/// tolerance allows, and convergence is still judged on the true residual. Solvers that do not
/// follow requests solve as before: direct ones, and the symmetric-form solver unless its
/// `follow_requested_reduction` is set (scenario key `solver.inexact_newton`).
///
/// The line search halves the step until the scaled merit decreases sufficiently (Armijo
/// condition). When even its shortest step (`2^-max_backtracks`) gives no decrease, this
/// function takes that step anyway and goes on (a static solve has nothing better to do, and
/// from a residual at round-off the next correction is negligible); [`newton_in_step`] fails
/// instead.
pub fn newton<S: DiscreteSystem>(
    system: &mut S,
    solver: &mut dyn LinearSolver,
    x: &mut [f64],
    params: &NewtonParams,
) -> Result<NewtonInfo, NewtonError<S::Error>> {
    let result = newton_iterations(system, solver, x, params, false, None);
    solver.set_requested_reduction(None);
    result
}

/// [`newton`] for a caller that can shorten what it is solving (a time step): when the line
/// search finds no decrease even at its shortest step, the iteration has stalled and the solve
/// fails at once with [`NewtonError::Stalled`]. A damping factor below its lower bound is the
/// failure test of damped Newton methods (Deuflhard, Newton Methods for Nonlinear Problems,
/// Springer 2004, sec. 3.1, from memory); a cut step costs less than running on to
/// `max_iterations`. Measured on the spinodal benchmark (t = 0 to 1 200) with [`newton`]: the
/// five solves that failed had all stalled this way by their 4th to 8th iteration, then crept
/// on with step lengths of 2^-8 to 2^-5 for the rest of their 15 iterations without converging
/// (75 of the window's 645 iterations); no solve that converged had stalled.
///
/// With a [`CorrectionTest`] the solve also stops once the error left in `x`, estimated from the
/// contraction of the corrections, is a small fraction of what the time step's error control
/// accepts (see there); the residual test still stops it too.
pub fn newton_in_step<S: DiscreteSystem>(
    system: &mut S,
    solver: &mut dyn LinearSolver,
    x: &mut [f64],
    params: &NewtonParams,
    test: Option<&CorrectionTest<'_>>,
) -> Result<NewtonInfo, NewtonError<S::Error>> {
    let result = newton_iterations(system, solver, x, params, true, test);
    solver.set_requested_reduction(None);
    result
}

/// A convergence test on the corrections, measured in the units of a time step's error
/// control, as implicit integrators for stiff systems and DAEs do (the corrector test of
/// DASSL/IDA; Brenan, Campbell and Petzold, Numerical Solution of Initial-Value Problems in
/// Differential-Algebraic Equations, SIAM 1996, sec. 5.2, from memory): after the `k`-th
/// correction `δ_k` (k ≥ 2, a full step), with the rate `ρ = ‖δ_k‖ / ‖δ_(k−1)‖ < 1`, the error
/// left in the iterate is about `ρ/(1 − ρ) ‖δ_k‖`, and the solve has converged when that is at
/// most `coefficient`. The norm is the largest, over the blocks of [`DiscreteSystem::blocks`],
/// of the root mean square of `weights_i δ_i` over the block's unknowns; `weights_i` is the
/// reciprocal of what the step's error control tolerates in unknown `i` (so 1 is the whole
/// tolerance), 0 for an unknown that is not measured.
///
/// The stop comes before the residual has fallen to round-off, so it leaves in every residual
/// row what the last linear solve left. A balance that is a linear function of the unknowns
/// (the total amount of a species in a closed or periodic body: the sum of all mass rows, in
/// which the flux terms cancel whatever the mobility) changes by exactly the linear solve's
/// residual in that combination. (With a prescribed concentration or potential the balance
/// sums the free rows only, where a concentration-dependent mobility also leaves the nonlinear
/// remainder of the stopped iteration: `tests/examples.rs`, the notched plate.)
/// Where the last correction was solved loosely (a forcing term of the inexact Newton method),
/// one more correction with the same Jacobian is solved to the solver's own tolerance before
/// the solve returns; it counts as an iteration. Measured on the spinodal benchmark
/// (docs/performance.md, t = 0 to 150, coefficient 0.1): without it the total amount drifted
/// by up to 3.5e-7 mol (1.7e-11 of itself), with it solved to a reduction of 1e-4 by up to
/// 2.7e-8 mol, with it solved to GMRES's own tolerance by up to 7.1e-10 mol, as with the
/// residual test alone (1.0e-9 mol).
#[derive(Clone, Copy, Debug)]
pub struct CorrectionTest<'a> {
    pub weights: &'a [f64],
    pub coefficient: f64,
}

impl CorrectionTest<'_> {
    fn norm(&self, dx: &[f64], blocks: &[std::ops::Range<usize>]) -> f64 {
        blocks
            .iter()
            .map(|b| {
                let (sum, count) = dx[b.clone()].iter().zip(&self.weights[b.clone()]).fold(
                    (0.0, 0usize),
                    |(s, n), (&d, &w)| {
                        if w > 0.0 {
                            (s + (w * d) * (w * d), n + 1)
                        } else {
                            (s, n)
                        }
                    },
                );
                if count == 0 {
                    0.0
                } else {
                    (sum / count as f64).sqrt()
                }
            })
            .fold(
                0.0,
                |m: f64, v| if v.is_nan() { f64::NAN } else { m.max(v) },
            )
    }
}

/// First forcing term of the inexact Newton iteration (see [`newton`]). Measured on the
/// spinodal benchmark (docs/performance.md, t = 0 to 40): the first correction of a time step
/// from its predictor reduces the residual by 0.04 to 0.3 when solved exactly; with first
/// forcing term and cap 1e-1, 3e-3 and 1e-3 the window took 119, 104 and 99 Newton iterations
/// (98 with exact solves) and 460, 468 and 454 GMRES iterations (793 exact), measured before
/// `EXACT_BELOW` existed.
const FIRST_FORCING: f64 = 1e-3;
/// Largest forcing term (see [`newton`]).
const MAX_FORCING: f64 = 1e-3;
/// Below this scaled residual (relative to the start of the solve; 0 when every block is at its
/// round-off floor) the solves are exact again: a loose solve there leaves its error in the
/// converged state. Measured on the notched-plate example with `inexact_newton = true`
/// (dilute mobility, docs/performance.md): without this switch its worst relative mass-balance
/// error went from 8.9e-13 to 8.7e-8 and its Newton iterations from 89 to 170; with it, 4.3e-13
/// and 89. On the spinodal benchmark (t = 0 to 40) it costs 488 GMRES iterations instead of 454
/// (793 with exact solves).
const EXACT_BELOW: f64 = 1e-6;
/// `γ` of Eisenstat and Walker's choice 2 (their recommended value, from memory).
const FORCING_GAMMA: f64 = 0.9;

fn newton_iterations<S: DiscreteSystem>(
    system: &mut S,
    solver: &mut dyn LinearSolver,
    x: &mut [f64],
    params: &NewtonParams,
    stall_fails: bool,
    test: Option<&CorrectionTest<'_>>,
) -> Result<NewtonInfo, NewtonError<S::Error>> {
    let n = system.n_dofs();
    assert_eq!(x.len(), n);
    if let Some(t) = test {
        assert_eq!(t.weights.len(), n, "one weight per unknown");
    }
    system.impose_constraints(x);
    let mut jac = CsrMatrix::zeros(system.pattern());
    let mut res = vec![0.0; n];
    let mut trial = vec![0.0; n];
    let mut dx = vec![0.0; n];
    let mut info = NewtonInfo::default();
    system
        .assemble_into(x, &mut jac, &mut res)
        .map_err(NewtonError::System)?;
    let mut rn = max_norm(&res);
    if !rn.is_finite() {
        return Err(NewtonError::NonFinite {
            iteration: 0,
            dof: first_non_finite(&res),
        });
    }
    check_jacobian(&jac, 0)?;
    info.residual_norms.push(rn);
    let blocks = system.blocks();
    let scales = system.block_scales();
    assert_eq!(scales.len(), blocks.len(), "one scale per block");
    let r0: Vec<f64> = blocks.iter().map(|b| max_norm(&res[b.clone()])).collect();
    if rn <= params.abs_tol {
        return Ok(info);
    }
    let mut floors = round_off_floors(&jac, x, &blocks);
    // Chord steps (see `DiscreteSystem::reuse_jacobian`): the factorisation is kept while each
    // iteration reduces the residual at least by `CHORD_RATIO` with a full step.
    const CHORD_RATIO: f64 = 0.25;
    let reuse = system.reuse_jacobian();
    let mut factored_current = false;
    let all_blocks = vec![true; blocks.len()];
    let mut previous_merit: Option<f64> = None;
    // Weighted size of the last correction (see `CorrectionTest`), when it was a full step.
    let mut previous_correction: Option<f64> = None;
    for it in 1..=params.max_iterations {
        let merit_now = scaled_merit(&res, &blocks, &r0, &floors, &all_blocks);
        let forcing = match previous_merit {
            _ if merit_now <= EXACT_BELOW => 0.0,
            None => FIRST_FORCING,
            Some(m) if m > 0.0 => (FORCING_GAMMA * (merit_now / m).powi(2)).min(MAX_FORCING),
            Some(_) => 0.0,
        };
        previous_merit = Some(merit_now);
        solver.set_requested_reduction(Some(forcing));
        if !factored_current {
            if let Some(transform) = system.row_transform() {
                solver.set_row_transform(transform)?;
            }
            solver.factor(&jac)?;
            info.factorizations += 1;
            factored_current = true;
        }
        for (d, r) in dx.iter_mut().zip(&res) {
            *d = -r;
        }
        solver.solve_in_place(&mut dx)?;
        if !max_norm(&dx).is_finite() {
            return Err(NewtonError::NonFinite {
                iteration: it,
                dof: first_non_finite(&dx),
            });
        }
        // A correction below the step tolerance in every block: the iterate is converged to
        // round-off, where a residual comparison is noise. Take the step and stop.
        // The floor `scale` matters for a block whose solution is zero (a clamped
        // displacement): there round-off corrections never fall below a fraction of `|x|`.
        // Blocks whose correction is below the step tolerance have nothing left to gain: their
        // residual is what round-off leaves, so the line search leaves them out.
        let active: Vec<bool> = blocks
            .iter()
            .zip(&scales)
            .map(|(b, &s)| {
                max_norm(&dx[b.clone()]) > params.step_tol * max_norm(&x[b.clone()]).max(s)
            })
            .collect();
        let negligible = !active.contains(&true);
        if negligible {
            for i in 0..n {
                x[i] += dx[i];
            }
            system
                .residual_into(x, &mut res)
                .map_err(NewtonError::System)?;
            info.iterations = it;
            info.residual_norms.push(max_norm(&res));
            return Ok(info);
        }
        // Backtracking on the scaled merit (Armijo-type sufficient decrease).
        let merit = scaled_merit(&res, &blocks, &r0, &floors, &active);
        let mut alpha = 1.0;
        let mut accepted = None;
        for k in 0..=params.max_backtracks {
            for i in 0..n {
                trial[i] = x[i] + alpha * dx[i];
            }
            let last = k == params.max_backtracks;
            // A trial the system cannot evaluate (e.g. a concentration out of range) is
            // treated like a non-finite residual: shorten the step.
            let tn = match system.residual_into(&trial, &mut res) {
                Ok(()) => max_norm(&res),
                Err(e) if last => return Err(NewtonError::System(e)),
                Err(_) => f64::NAN,
            };
            if !tn.is_finite() && last {
                return Err(NewtonError::NonFinite {
                    iteration: it,
                    dof: first_non_finite(&res),
                });
            }
            let tm = scaled_merit(&res, &blocks, &r0, &floors, &active);
            let decrease = tm <= (1.0 - 1e-4 * alpha) * merit || tm == 0.0;
            if tn.is_finite() && (decrease || tn <= params.abs_tol) {
                accepted = Some((tn, tm));
                info.backtracks += k;
                break;
            }
            if last {
                // No sufficient decrease at the shortest step: a stall (see `newton_in_step`).
                if stall_fails && params.max_backtracks > 0 {
                    return Err(NewtonError::Stalled {
                        iteration: it,
                        alpha,
                        residual: tn,
                    });
                }
                // Take it (`newton`), as plain Newton does without a line search.
                accepted = Some((tn, tm));
                info.backtracks += k;
                break;
            }
            alpha *= 0.5;
        }
        // The loop either accepted a finite residual or returned on the last trial.
        let (tn, tm) = accepted.expect("accepted or returned above");
        let full_step = alpha == 1.0;
        let fast = full_step && tm <= CHORD_RATIO * merit;
        x.copy_from_slice(&trial);
        rn = tn;
        info.iterations = it;
        info.residual_norms.push(rn);
        // The error left after this correction, estimated from the contraction rate.
        let mut small_error = false;
        if let Some(t) = test {
            let size = t.norm(&dx, &blocks);
            if let (true, Some(before)) = (full_step, previous_correction) {
                let rate = size / before;
                small_error = rate < 1.0 && rate / (1.0 - rate) * size <= t.coefficient;
            }
            previous_correction = full_step.then_some(size);
        }
        let converged =
            blocks
                .iter()
                .zip(&r0)
                .zip(&scales)
                .zip(&floors)
                .all(|(((b, &r0b), &s), &floor)| {
                    let rb = max_norm(&res[b.clone()]);
                    let small_step = full_step
                        && max_norm(&dx[b.clone()])
                            <= params.step_tol * max_norm(&x[b.clone()]).max(s);
                    rb <= params.abs_tol || rb <= params.rel_tol * r0b || rb <= floor || small_step
                });
        if converged {
            return Ok(info);
        }
        if small_error {
            if forcing > 0.0 && solver.follows_requested_reduction() {
                // The last correction was solved loosely (inexact Newton): one more with the
                // current factorisation and Jacobian, solved to the solver's own tolerance,
                // so that the balances the equations keep exactly (a linear combination of
                // residual rows that is linear in the unknowns, such as the total amount of
                // a conserved species) hold to that tolerance (see `CorrectionTest`).
                solver.set_requested_reduction(Some(0.0));
                for (d, r) in dx.iter_mut().zip(&res) {
                    *d = -r;
                }
                solver.solve_in_place(&mut dx)?;
                for i in 0..n {
                    x[i] += dx[i];
                }
                system
                    .residual_into(x, &mut res)
                    .map_err(NewtonError::System)?;
                rn = max_norm(&res);
                if !rn.is_finite() {
                    return Err(NewtonError::NonFinite {
                        iteration: it + 1,
                        dof: first_non_finite(&res),
                    });
                }
                info.iterations = it + 1;
                info.residual_norms.push(rn);
            }
            return Ok(info);
        }
        if it < params.max_iterations {
            if reuse && fast {
                // `res` already holds the residual at the accepted point (line search).
                continue;
            }
            // `res` holds the residual at `x` (line search).
            system
                .jacobian_into(x, &mut jac, &mut res)
                .map_err(NewtonError::System)?;
            check_jacobian(&jac, it)?;
            floors = round_off_floors(&jac, x, &blocks);
            factored_current = false;
        }
    }
    Err(NewtonError::NotConverged {
        iterations: params.max_iterations,
        residual: rn,
    })
}

/// Relative size of round-off in a residual row, against the row's terms `Σ_j |J_ij x_j|`:
/// a few hundred units of double precision, for sums of some tens of terms (common practice,
/// no source; the componentwise backward error `|r_i| / (|J| |x|)_i` of Oettli and Prager,
/// Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, sec. 7.2, from
/// memory).
const ROUND_OFF: f64 = 1e-13;

/// Per block, the residual level that round-off alone produces at `x`: `ROUND_OFF` times the
/// largest `Σ_j |J_ij x_j|` over the block's rows. A block residual below it cannot be reduced
/// further and counts as converged; above it, only the excess enters the line search.
fn round_off_floors(jac: &CsrMatrix, x: &[f64], blocks: &[std::ops::Range<usize>]) -> Vec<f64> {
    let p = jac.pattern.as_ref();
    blocks
        .iter()
        .map(|b| {
            let terms = b.clone().fold(0.0f64, |m, i| {
                let row: f64 = (p.row_ptr[i]..p.row_ptr[i + 1])
                    .map(|k| (jac.values[k] * x[p.col_idx[k]]).abs())
                    .sum();
                m.max(row)
            });
            ROUND_OFF * terms
        })
        .collect()
}

/// Merit of the line search over the `active` blocks (those whose Newton correction is not
/// negligible): the largest block residual above its round-off floor, each block relative to
/// the size of its terms (`floor / ROUND_OFF`, or its first residual if larger, as for a load on
/// a body at rest). Blocks carry different units (forces, species rates, potentials), so a plain
/// max norm follows whichever block has the largest numbers, even when only round-off noise is
/// left in it, and the line search then cuts good steps of the other blocks; relative to its
/// terms, each block's residual is a dimensionless backward error.
fn scaled_merit(
    res: &[f64],
    blocks: &[std::ops::Range<usize>],
    r0: &[f64],
    floors: &[f64],
    active: &[bool],
) -> f64 {
    blocks
        .iter()
        .zip(r0.iter().zip(floors))
        .zip(active)
        .filter(|(_, &on)| on)
        .map(|((b, (&r0b, &floor)), _)| {
            let excess = (max_norm(&res[b.clone()]) - floor).max(0.0);
            excess / (floor / ROUND_OFF).max(r0b).max(f64::MIN_POSITIVE)
        })
        .fold(0.0, f64::max)
}

#[cfg(test)]
mod tests {
    use super::*;
    use dilata_linalg::{DirectParams, FaerLu, Ordering};

    /// `R(x) = x² − 2`, root `√2`.
    struct Square {
        pattern: Arc<CsrPattern>,
    }

    #[derive(Debug, thiserror::Error)]
    #[error("never")]
    struct Never;

    impl DiscreteSystem for Square {
        type Error = Never;
        fn n_dofs(&self) -> usize {
            1
        }
        fn pattern(&self) -> Arc<CsrPattern> {
            self.pattern.clone()
        }
        fn impose_constraints(&self, _x: &mut [f64]) {}
        fn assemble_into(
            &mut self,
            x: &[f64],
            j: &mut CsrMatrix,
            r: &mut [f64],
        ) -> Result<(), Never> {
            j.values[0] = 2.0 * x[0];
            self.residual_into(x, r)
        }
        fn residual_into(&mut self, x: &[f64], r: &mut [f64]) -> Result<(), Never> {
            r[0] = x[0] * x[0] - 2.0;
            Ok(())
        }
    }

    fn solve(test: Option<&CorrectionTest<'_>>) -> (f64, NewtonInfo) {
        let mut sys = Square {
            pattern: Arc::new(CsrPattern::from_rows(1, vec![vec![0]])),
        };
        let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Natural));
        solver.analyze(&sys.pattern).unwrap();
        let params = NewtonParams {
            abs_tol: 0.0,
            rel_tol: 1e-15,
            step_tol: 1e-15,
            ..NewtonParams::default()
        };
        let mut x = vec![1.5];
        let info = newton_in_step(&mut sys, &mut solver, &mut x, &params, test).unwrap();
        (x[0], info)
    }

    /// Newton from 1.5 (hand-computed iterates 1.416 667, 1.414 216, 1.414 213 562 375;
    /// corrections −8.3e-2, −2.45e-3, −2.1e-6): with a tolerance of 1e-3 (weight 1e3) and
    /// coefficient 0.1 the rate after the second correction is 0.029 and the estimated error
    /// 7.4e-2 tolerances, so the test stops there, with an error (2.1e-6) inside the promised
    /// 0.1 tolerance; the residual test alone goes on to round-off.
    #[test]
    fn the_correction_test_stops_once_the_estimated_error_is_small() {
        let (tight, plain) = solve(None);
        assert!(plain.iterations >= 4, "{plain:?}");
        assert!((tight - 2.0_f64.sqrt()).abs() <= 1e-15);
        let weights = [1e3];
        let test = CorrectionTest {
            weights: &weights,
            coefficient: 0.1,
        };
        let (x, info) = solve(Some(&test));
        assert_eq!(info.iterations, 2, "{info:?}");
        let error = (x - 2.0_f64.sqrt()).abs();
        assert!(error * weights[0] <= 0.1, "error {error:e}");
        assert!(error > 1e-7, "stopped before round-off: {error:e}");
        // A tolerance a thousand times tighter needs the third correction.
        let weights = [1e6];
        let test = CorrectionTest {
            weights: &weights,
            coefficient: 0.1,
        };
        let (x, info) = solve(Some(&test));
        assert_eq!(info.iterations, 3, "{info:?}");
        assert!((x - 2.0_f64.sqrt()).abs() * weights[0] <= 0.1);
        // A zero weight measures nothing: the residual test decides.
        let weights = [0.0];
        let test = CorrectionTest {
            weights: &weights,
            coefficient: 0.1,
        };
        assert_eq!(solve(Some(&test)).1.iterations, plain.iterations);
    }
}
