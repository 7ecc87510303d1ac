//! The direction field: both rates sampled on a regular grid over the window, for arrows and
//! speed colouring.
//!
//! Samples sit at the centres of an `nx × ny` tiling of the window (half a cell in from every
//! edge), so arrows never straddle the frame and formulas singular on an edge (ln x at x = 0)
//! are not sampled there. The grid goes through the compiled formulas' batch evaluator, which
//! is far faster than one call per point; [`eval_grid`] is shared with the nullclines and
//! contours.

use std::cell::RefCell;

use rayon::prelude::*;

use crate::compiled::Formulas;
use crate::marching::{Grid, MAX_GRID_SIDE};
use crate::model::Model;
use crate::scene::{DirectionField, FieldSample};

/// Points per task of [`eval_grid`] (a few rows): small enough to stay in cache, large enough
/// that handing blocks to threads costs little next to evaluating them.
const PAR_CHUNK: usize = 8 * 1024;

/// Evaluates the first `keep` outputs of `formulas` at every vertex of `grid`, through the
/// batch evaluator; one column per kept output, row-major from the bottom-left
/// (`k = j·nx + i`). The other outputs are computed (a program yields all of them) into small
/// per-block scratch buffers and dropped.
///
/// Rows go in blocks of about [`PAR_CHUNK`] points, each with its own small coordinate buffers
/// (a block's abscissae are one row repeated), spread over rayon's threads when there are
/// several blocks.
pub fn eval_grid(formulas: &Formulas, params: &[f64], grid: &Grid, keep: usize) -> Vec<Vec<f64>> {
    let n_out = formulas.n_outputs();
    let keep = keep.min(n_out);
    let (nx, ny) = (grid.nx, grid.ny);
    let rows_per_block = (PAR_CHUNK / nx).clamp(1, ny);
    let block = rows_per_block * nx;
    let row: Vec<f64> = (0..nx).map(|i| grid.x(i)).collect();
    // NOTE: only the kept columns are grid-sized, and they come from this thread's pool (see
    // `recycle`): a fresh half-megabyte buffer costs more in page faults than evaluating a
    // cheap formula on the whole grid.
    let mut cols: Vec<Vec<f64>> = (0..keep).map(|_| take_buffer(nx * ny)).collect();
    // Transpose "columns of blocks" into "blocks of columns", one task per block.
    let mut pieces: Vec<_> = cols.iter_mut().map(|c| c.chunks_mut(block)).collect();
    let tasks: Vec<(usize, Vec<&mut [f64]>)> = (0..ny.div_ceil(rows_per_block))
        .map(|b| (b, pieces.iter_mut().filter_map(Iterator::next).collect()))
        .collect();
    let run = |(b, mut outs): (usize, Vec<&mut [f64]>)| {
        let j0 = b * rows_per_block;
        let rows = rows_per_block.min(ny - j0);
        let mut xs = Vec::with_capacity(rows * nx);
        let mut ys = Vec::with_capacity(rows * nx);
        for j in j0..j0 + rows {
            xs.extend_from_slice(&row);
            ys.extend(std::iter::repeat_n(grid.y(j), nx));
        }
        let mut scratch = vec![vec![0.0; rows * nx]; n_out - keep];
        outs.extend(scratch.iter_mut().map(Vec::as_mut_slice));
        formulas.eval_batch(&[&xs, &ys], params, &mut outs);
    };
    if tasks.len() == 1 {
        tasks.into_iter().for_each(run);
    } else {
        tasks.into_par_iter().for_each(run);
    }
    cols
}

/// Grid-sized buffers kept for reuse, per thread, at most this many values each (8 MiB).
const POOL_MAX_VALUES: usize = 1 << 20;

/// Buffers kept per thread.
const POOL_MAX_BUFFERS: usize = 4;

thread_local! {
    static POOL: RefCell<Vec<Vec<f64>>> = const { RefCell::new(Vec::new()) };
}

/// A buffer of `n` zeros, reusing one of this thread's recycled buffers when one is big enough.
fn take_buffer(n: usize) -> Vec<f64> {
    let reused = POOL.with(|pool| {
        let mut pool = pool.borrow_mut();
        let k = pool.iter().position(|b| b.capacity() >= n)?;
        Some(pool.swap_remove(k))
    });
    let mut buf = reused.unwrap_or_default();
    buf.clear();
    buf.resize(n, 0.0);
    buf
}

/// Hands buffers from [`eval_grid`] back for reuse by later calls on this thread (buffers
/// larger than 8 MiB, or beyond a few, are simply freed).
pub fn recycle(buffers: Vec<Vec<f64>>) {
    POOL.with(|pool| {
        let mut pool = pool.borrow_mut();
        for b in buffers {
            if b.capacity() <= POOL_MAX_VALUES && pool.len() < POOL_MAX_BUFFERS {
                pool.push(b);
            }
        }
    });
}

/// The direction field on `nx × ny` samples at the cell centres of the window, row-major from
/// the bottom-left. Sides are clamped to [`MAX_GRID_SIDE`]; a zero side gives an empty field.
/// Where a rate is not finite the sample keeps the model's value and its speed is NaN;
/// `max_speed` is the largest finite speed (0 when there is none).
pub fn direction_field(model: &Model, nx: usize, ny: usize) -> DirectionField {
    let (nx, ny) = (nx.min(MAX_GRID_SIDE), ny.min(MAX_GRID_SIDE));
    if nx == 0 || ny == 0 {
        return DirectionField::default();
    }
    let w = model.window();
    let cx: Vec<f64> = (0..nx)
        .map(|i| w.x_min + (i as f64 + 0.5) * w.width() / nx as f64)
        .collect();
    let mut xs = Vec::with_capacity(nx * ny);
    let mut ys = Vec::with_capacity(nx * ny);
    for j in 0..ny {
        let y = w.y_min + (j as f64 + 0.5) * w.height() / ny as f64;
        xs.extend_from_slice(&cx);
        ys.extend(std::iter::repeat_n(y, nx));
    }
    let mut f = vec![0.0; xs.len()];
    let mut g = vec![0.0; xs.len()];
    model
        .rate_formulas()
        .eval_batch(&[&xs, &ys], model.params(), &mut [&mut f, &mut g]);
    let mut max_speed = 0.0_f64;
    let samples = (0..nx * ny)
        .map(|k| {
            let rate = [f[k], g[k]];
            let speed = if rate[0].is_finite() && rate[1].is_finite() {
                rate[0].hypot(rate[1])
            } else {
                f64::NAN
            };
            if speed.is_finite() {
                max_speed = max_speed.max(speed);
            }
            FieldSample {
                at: [xs[k], ys[k]],
                rate,
                speed,
            }
        })
        .collect();
    DirectionField {
        nx,
        ny,
        samples,
        max_speed,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::library;

    fn custom(rates: [&str; 2], window: [f64; 4]) -> Model {
        crate::test_support::model(rates, &[], None, window)
    }

    /// Relative agreement allowed between the batch interpreter and the per-point evaluator
    /// (which may be native code): library functions such as ln may round differently, and
    /// a few ulps of that survive the arithmetic.
    const BATCH_RTOL: f64 = 1e-13;

    #[test]
    fn samples_match_pointwise_rates_at_cell_centres() {
        let model =
            crate::model::Model::new(&library::builtin("holling-ii").expect("built in").spec())
                .expect("compiles");
        let field = direction_field(&model, 7, 5);
        assert_eq!((field.nx, field.ny, field.samples.len()), (7, 5, 35));
        // Reference: the cell centres of a 7 × 5 tiling of 0..10 × 0..5 (closed form).
        let s = field.samples[2 * 7 + 3];
        assert!((s.at[0] - 3.5 * 10.0 / 7.0).abs() < 1e-14);
        assert!((s.at[1] - 2.5).abs() < 1e-14);
        let mut max = 0.0_f64;
        for s in &field.samples {
            let r = model.rates(s.at[0], s.at[1]);
            for c in 0..2 {
                assert!(
                    (s.rate[c] - r[c]).abs() <= BATCH_RTOL * r[c].abs().max(1.0),
                    "{s:?} vs {r:?}"
                );
            }
            assert!((s.speed - r[0].hypot(r[1])).abs() <= 1e-13 * s.speed.max(1.0));
            max = max.max(s.speed);
        }
        assert_eq!(field.max_speed, max);
    }

    #[test]
    fn undefined_regions_give_nan_speeds_without_panicking() {
        // sqrt(x) is NaN for x < 0: the left half of the window.
        let model = custom(["sqrt(x)", "1/y"], [-1.0, 1.0, -1.0, 1.0]);
        let field = direction_field(&model, 8, 8);
        assert_eq!(field.samples.len(), 64);
        for s in &field.samples {
            assert_eq!(s.speed.is_nan(), s.at[0] < 0.0, "{s:?}");
        }
        assert!(field.max_speed.is_finite() && field.max_speed > 0.0);
        // Undefined everywhere: no finite speed, max 0.
        let nowhere = custom(["ln(-1 - x*x)", "0"], [-1.0, 1.0, -1.0, 1.0]);
        let field = direction_field(&nowhere, 4, 4);
        assert!(field.samples.iter().all(|s| s.speed.is_nan()));
        assert_eq!(field.max_speed, 0.0);
        assert!(direction_field(&model, 0, 5).samples.is_empty());
    }

    #[test]
    fn a_grid_split_across_threads_equals_one_batch() {
        // Reference: one batch over all vertices (no splitting) must give identical bits.
        let model = crate::model::Model::new(&library::default_model()).expect("compiles");
        let grid = Grid::spanning(&model.window(), 300, 233).expect("grid");
        let cols = eval_grid(model.rate_formulas(), model.params(), &grid, 2);
        let (xs, ys) = grid.columns();
        let mut f = vec![0.0; xs.len()];
        let mut g = vec![0.0; xs.len()];
        model
            .rate_formulas()
            .eval_batch(&[&xs, &ys], model.params(), &mut [&mut f, &mut g]);
        assert_eq!(cols.len(), 2);
        assert_eq!(cols[0], f);
        assert_eq!(cols[1], g);
    }
}
