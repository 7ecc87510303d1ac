//! Verification of the tableaus: row sums, the order conditions of every rooted tree (Butcher's
//! theory, Hairer–Nørsett–Wanner "Solving ODEs I", Sec. II.2, Theorem 2.13: a method has order
//! p iff Σ b_i Φ_i(t) = 1/γ(t) for all trees with |t| ≤ p), the embedded estimators, and the
//! continuous extensions (Sec. II.6: Σ b_i(θ) Φ_i(t) = θ^|t|/γ(t) for |t| ≤ p*), the last
//! through the production dense-output code applied to unit stage vectors.

use std::cell::Cell;

use super::dense::Dense;
use super::{Method, System, dop853, dopri5};

/// A rooted tree: its order and its subtrees (indices into the tree list).
struct Tree {
    order: usize,
    children: Vec<usize>,
}

/// All rooted trees of order ≤ `max_order`, each once (children as non-decreasing indices).
fn trees(max_order: usize) -> Vec<Tree> {
    fn multisets(
        list: &[Tree],
        budget: usize,
        min_index: usize,
        current: &mut Vec<usize>,
        out: &mut Vec<Vec<usize>>,
    ) {
        if budget == 0 {
            out.push(current.clone());
            return;
        }
        for i in min_index..list.len() {
            if list[i].order <= budget {
                current.push(i);
                multisets(list, budget - list[i].order, i, current, out);
                current.pop();
            }
        }
    }
    let mut list = vec![Tree {
        order: 1,
        children: Vec::new(),
    }];
    for n in 2..=max_order {
        let mut found = Vec::new();
        multisets(&list, n - 1, 0, &mut Vec::new(), &mut found);
        list.extend(
            found
                .into_iter()
                .map(|children| Tree { order: n, children }),
        );
    }
    list
}

/// Φ(t) (one value per stage) and γ(t) for every tree, for the tableau `a`.
fn weights_and_densities(a: &[Vec<f64>], list: &[Tree]) -> Vec<(Vec<f64>, f64)> {
    let s = a.len();
    let mut out: Vec<(Vec<f64>, f64)> = Vec::with_capacity(list.len());
    for tree in list {
        let mut phi = vec![1.0; s];
        let mut gamma = tree.order as f64;
        for &child in &tree.children {
            let (child_phi, child_gamma) = &out[child];
            for (i, p) in phi.iter_mut().enumerate() {
                *p *= (0..s).map(|j| a[i][j] * child_phi[j]).sum::<f64>();
            }
            gamma *= child_gamma;
        }
        out.push((phi, gamma));
    }
    out
}

/// Largest violation of Σ b_i Φ_i(t) = θ^|t|/γ(t) over trees of order `orders`, relative to
/// the size of the terms summed (so that cancellation of large coefficients is judged fairly).
fn worst_violation(
    a: &[Vec<f64>],
    b: &[f64],
    theta: f64,
    orders: std::ops::RangeInclusive<usize>,
) -> f64 {
    let list = trees(*orders.end());
    let wd = weights_and_densities(a, &list);
    list.iter()
        .zip(&wd)
        .filter(|(tree, _)| orders.contains(&tree.order))
        .map(|(tree, (phi, gamma))| {
            let sum: f64 = b.iter().zip(phi).map(|(b, p)| b * p).sum();
            let size: f64 = b.iter().zip(phi).map(|(b, p)| (b * p).abs()).sum::<f64>() + 1.0;
            let exact = theta.powi(tree.order as i32) / gamma;
            (sum - exact).abs() / size
        })
        .fold(0.0, f64::max)
}

/// Dense `s × s` matrix from sparse rows 1..s (row 0 is empty).
fn full_matrix(rows: &[(&[f64], &[usize])]) -> Vec<Vec<f64>> {
    let s = rows.len() + 1;
    let mut a = vec![vec![0.0; s]; s];
    for (r, (coeffs, idx)) in rows.iter().enumerate() {
        for (c, &j) in coeffs.iter().zip(idx.iter()) {
            a[r + 1][j] = *c;
        }
    }
    a
}

fn sparse_vector(len: usize, coeffs: &[f64], idx: &[usize]) -> Vec<f64> {
    let mut v = vec![0.0; len];
    for (c, &j) in coeffs.iter().zip(idx) {
        v[j] = *c;
    }
    v
}

/// Rounding of tableau entries given to ~17 digits, amplified by cancellation.
const ORDER_TOL: f64 = 1e-14;
/// A violated condition is far larger than roundoff.
const VIOLATED: f64 = 1e-6;

#[test]
fn tree_enumeration_has_the_known_counts() {
    // Number of rooted trees of order 1..=8: 1, 1, 2, 4, 9, 20, 48, 115 (OEIS A000081).
    let list = trees(8);
    let counts: Vec<usize> = (1..=8)
        .map(|n| list.iter().filter(|t| t.order == n).count())
        .collect();
    assert_eq!(counts, [1, 1, 2, 4, 9, 20, 48, 115]);
}

#[test]
fn dopri5_rows_sum_to_the_nodes() {
    let a = full_matrix(&dopri5::ROWS);
    for (i, row) in a.iter().enumerate() {
        let sum: f64 = row.iter().sum();
        assert!(
            (sum - dopri5::C[i]).abs() < 1e-15,
            "row {i}: {sum} vs {}",
            dopri5::C[i]
        );
    }
}

#[test]
fn dopri5_weights_have_order_five_and_the_embedded_order_four() {
    let a = full_matrix(&dopri5::ROWS);
    let b = sparse_vector(7, &dopri5::B, &dopri5::B_IDX);
    assert!(worst_violation(&a, &b, 1.0, 1..=5) < ORDER_TOL);
    assert!(
        worst_violation(&a, &b, 1.0, 6..=6) > VIOLATED,
        "order is exactly 5"
    );
    let e = sparse_vector(7, &dopri5::E, &dopri5::E_IDX);
    let b_hat: Vec<f64> = b.iter().zip(&e).map(|(b, e)| b - e).collect();
    assert!(worst_violation(&a, &b_hat, 1.0, 1..=4) < ORDER_TOL);
    assert!(
        worst_violation(&a, &b_hat, 1.0, 5..=5) > VIOLATED,
        "embedded order is 4"
    );
}

#[test]
fn dop853_rows_sum_to_the_nodes() {
    let a = full_matrix(&dop853::ROWS);
    for (i, row) in a.iter().enumerate() {
        let sum: f64 = row.iter().sum();
        assert!(
            (sum - dop853::C[i]).abs() < 1e-14,
            "row {i}: {sum} vs {}",
            dop853::C[i]
        );
    }
}

#[test]
fn dop853_weights_have_order_eight_and_the_estimators_orders_five_and_three() {
    let a12: Vec<Vec<f64>> = full_matrix(&dop853::ROWS)[..12]
        .iter()
        .map(|row| row[..12].to_vec())
        .collect();
    let b = sparse_vector(12, &dop853::B, &dop853::B_IDX);
    assert!(worst_violation(&a12, &b, 1.0, 1..=8) < ORDER_TOL);
    assert!(
        worst_violation(&a12, &b, 1.0, 9..=9) > 1e-9,
        "order is exactly 8"
    );
    let e5 = sparse_vector(12, &dop853::E5, &dop853::E5_IDX);
    let b5: Vec<f64> = b.iter().zip(&e5).map(|(b, e)| b - e).collect();
    assert!(worst_violation(&a12, &b5, 1.0, 1..=5) < ORDER_TOL);
    assert!(
        worst_violation(&a12, &b5, 1.0, 6..=6) > VIOLATED,
        "5th-order estimator"
    );
    let b3 = sparse_vector(12, &dop853::BHH, &dop853::BHH_IDX);
    assert!(worst_violation(&a12, &b3, 1.0, 1..=3) < ORDER_TOL);
    assert!(
        worst_violation(&a12, &b3, 1.0, 4..=4) > VIOLATED,
        "3rd-order estimator"
    );
}

/// The weights `b_j(θ)` of the production dense output, obtained by feeding unit stage vectors
/// `k_j = e_j` (so component `j` of the interpolant is `b_j(θ)`), with `h = 1` and `y = 0`.
fn dopri5_dense_weights(theta: f64) -> Vec<f64> {
    let mut k = [[0.0; 7]; 7];
    for (j, row) in k.iter_mut().enumerate() {
        row[j] = 1.0;
    }
    let y_new: [f64; 7] = std::array::from_fn(|j| sparse_vector(7, &dopri5::B, &dopri5::B_IDX)[j]);
    let r = dopri5::dense_coefficients(&[0.0; 7], &y_new, 1.0, &k);
    let dense = Dense {
        method: Method::Dopri5,
        t_old: 0.0,
        h: 1.0,
        t_new: 1.0,
        r,
    };
    dense.eval(theta).to_vec()
}

/// A "system" returning the next unit vector e₁₃, e₁₄, e₁₅ at each call, so the extra stages
/// of the DOP853 dense output become unit stage vectors too.
struct NextUnitVector(Cell<usize>);

impl System<16> for NextUnitVector {
    fn rhs(&self, _t: f64, _y: &[f64; 16], dy: &mut [f64; 16]) {
        let j = self.0.get();
        self.0.set(j + 1);
        *dy = [0.0; 16];
        if let Some(slot) = dy.get_mut(j) {
            *slot = 1.0;
        }
    }
}

fn dop853_dense_weights(theta: f64) -> Vec<f64> {
    let mut k = [[0.0; 16]; 16];
    for (j, row) in k.iter_mut().enumerate().take(13) {
        row[j] = 1.0;
    }
    let b = sparse_vector(16, &dop853::B, &dop853::B_IDX);
    let y_new: [f64; 16] = std::array::from_fn(|j| b[j]);
    let sys = NextUnitVector(Cell::new(13));
    let (r, evals) = dop853::dense_coefficients(&sys, 0.0, &[0.0; 16], &y_new, 1.0, &mut k, true);
    assert_eq!(evals, 3);
    let dense = Dense {
        method: Method::Dop853,
        t_old: 0.0,
        h: 1.0,
        t_new: 1.0,
        r,
    };
    dense.eval(theta).to_vec()
}

#[test]
fn dopri5_dense_output_has_order_four_at_interior_points() {
    let a = full_matrix(&dopri5::ROWS);
    for theta in [0.1, 0.37, 0.5, 0.8] {
        let w = dopri5_dense_weights(theta);
        assert!(
            worst_violation(&a, &w, theta, 1..=4) < ORDER_TOL,
            "θ = {theta}"
        );
        assert!(
            worst_violation(&a, &w, theta, 5..=5) > VIOLATED,
            "θ = {theta}"
        );
    }
    let b = sparse_vector(7, &dopri5::B, &dopri5::B_IDX);
    let at_one = dopri5_dense_weights(1.0);
    assert!(at_one.iter().zip(&b).all(|(w, b)| (w - b).abs() < 1e-15));
    assert!(dopri5_dense_weights(0.0).iter().all(|w| *w == 0.0));
}

#[test]
fn dop853_dense_output_has_order_seven_at_interior_points() {
    let a = full_matrix(&dop853::ROWS);
    for theta in [0.1, 0.37, 0.5, 0.8] {
        let w = dop853_dense_weights(theta);
        assert!(
            worst_violation(&a, &w, theta, 1..=7) < ORDER_TOL,
            "θ = {theta}"
        );
        assert!(worst_violation(&a, &w, theta, 8..=8) > 1e-9, "θ = {theta}");
    }
    let b = sparse_vector(16, &dop853::B, &dop853::B_IDX);
    let at_one = dop853_dense_weights(1.0);
    assert!(at_one.iter().zip(&b).all(|(w, b)| (w - b).abs() < 1e-14));
    assert!(dop853_dense_weights(0.0).iter().all(|w| *w == 0.0));
}
