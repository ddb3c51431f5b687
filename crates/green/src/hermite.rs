//! Adaptive piecewise cubic Hermite tables of smooth functions of a horizontal distance.
//!
//! A function `f(ρ)` on `[ρ₀, ρ_end]` is tabulated in the stretched variable
//! `σ = (ρ − ρ₀) / ((ρ − ρ₀) + L)` ∈ `[0, 1)`: values and exact derivatives `df/dσ =
//! f′(ρ) (ρ − ρ₀ + L)² / L` at the nodes, cubic Hermite in between (error `∝ t²(1 − t)²` per
//! interval, largest at the midpoint). Starting from 16 equal intervals, every interval whose
//! midpoint value misses the direct value by more than the caller's tolerance is bisected, and
//! its halves are checked again. A lookup costs one division, an O(1) bucket start for the
//! interval search, and the cubic.
//!
//! The stretch fits the potentials tabulated here: analytic in `ρ` near `ρ₀` on the scale `L`,
//! and series in `1/ρ` (analytic in `1 − σ = L/(ρ − ρ₀ + L)`) far away.

/// A tabulated function of `ρ` (see the module docs).
#[derive(Clone, Debug)]
pub(crate) struct HermiteTable {
    /// `ρ₀` (m).
    origin: f64,
    /// Stretching length `L` (m).
    len: f64,
    /// Last tabulated `ρ` (m).
    end: f64,
    /// Nodes `σ_i` (increasing).
    sigma: Vec<f64>,
    /// Per interval `i`: `[f_i, h f′_i, f_{i+1}, h f′_{i+1}]` (`h` its width, `f′ = df/dσ`), one
    /// cache line per lookup.
    cubic: Vec<[f64; 4]>,
    /// `bucket[b]`: the last node at or below the start of bucket `b` of a uniform partition of
    /// `[σ_0, σ_last]` (four buckets per node).
    bucket: Vec<u32>,
    /// Buckets per unit σ.
    bucket_scale: f64,
}

/// Why a table could not be built.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct TooManyNodes;

impl HermiteTable {
    /// Tabulate `f` (returning `(f(ρ), f′(ρ))`) on `[origin, end]` with stretching length `len`
    /// until every interval midpoint is within `tol(ρ, f(ρ))` (absolute); at most `max_nodes`
    /// nodes. Evaluations run on all available threads.
    pub(crate) fn build(
        origin: f64,
        len: f64,
        end: f64,
        f: &(impl Fn(f64) -> (f64, f64) + Sync),
        tol: impl Fn(f64, f64) -> f64,
        max_nodes: usize,
    ) -> Result<Self, TooManyNodes> {
        let rho_of = |s: f64| origin + len * s / (1.0 - s);
        let eval = |s: f64| {
            let rho = rho_of(s);
            let (v, dv) = f(rho);
            let u = rho - origin + len;
            (v, dv * u * u / len)
        };
        let span = (end - origin).max(0.0);
        let s_max = span / (span + len);
        let n0 = 16;
        let mut sig: Vec<f64> = if s_max > 0.0 {
            (0..=n0).map(|i| s_max * i as f64 / n0 as f64).collect()
        } else {
            vec![0.0, 1e-9]
        };
        let mut vals = par_map(&sig, &eval);
        let mut pending: Vec<(usize, usize)> = (0..sig.len() - 1).map(|i| (i, i + 1)).collect();
        while !pending.is_empty() {
            if sig.len() > max_nodes {
                return Err(TooManyNodes);
            }
            let mids: Vec<f64> = pending.iter().map(|&(i, j)| 0.5 * (sig[i] + sig[j])).collect();
            let mid_vals = par_map(&mids, &eval);
            let mut next = Vec::new();
            for (((i, j), &m), &(vm, dm)) in pending.iter().zip(&mids).zip(&mid_vals) {
                let (i, j) = (*i, *j);
                let h = sig[j] - sig[i];
                let interp = 0.5 * (vals[i].0 + vals[j].0) + 0.125 * h * (vals[i].1 - vals[j].1);
                if (interp - vm).abs() > tol(rho_of(m), vm) {
                    let k = sig.len();
                    sig.push(m);
                    vals.push((vm, dm));
                    next.push((i, k));
                    next.push((k, j));
                }
            }
            pending = next;
        }
        let mut order: Vec<usize> = (0..sig.len()).collect();
        order.sort_by(|&x, &y| sig[x].total_cmp(&sig[y]));
        let sigma: Vec<f64> = order.iter().map(|&i| sig[i]).collect();
        let (bucket, bucket_scale) = buckets(&sigma);
        let cubic = order
            .windows(2)
            .map(|w| {
                let h = sig[w[1]] - sig[w[0]];
                [vals[w[0]].0, h * vals[w[0]].1, vals[w[1]].0, h * vals[w[1]].1]
            })
            .collect();
        Ok(Self { origin, len, end, sigma, cubic, bucket, bucket_scale })
    }

    /// Last tabulated `ρ` (m).
    pub(crate) fn end(&self) -> f64 {
        self.end
    }

    /// Number of nodes.
    pub(crate) fn nodes(&self) -> usize {
        self.sigma.len()
    }

    /// The interpolated `f(ρ)` for `ρ ∈ [ρ₀, ρ_end]` (clamped to the table outside).
    #[inline]
    pub(crate) fn eval(&self, rho: f64) -> f64 {
        let x = (rho - self.origin).max(0.0);
        let s = x / (x + self.len);
        let n = self.sigma.len();
        let b = (((s - self.sigma[0]) * self.bucket_scale) as usize).min(self.bucket.len() - 1);
        let mut i = self.bucket[b] as usize;
        while i + 2 < n && self.sigma[i + 1] <= s {
            i += 1;
        }
        let i = i.min(n - 2);
        let (s0, s1) = (self.sigma[i], self.sigma[i + 1]);
        let t = ((s - s0) / (s1 - s0)).clamp(0.0, 1.0);
        let [v0, d0, v1, d1] = self.cubic[i];
        // Hermite basis in Horner-friendly form: f = v0 + t²(3 − 2t)(v1 − v0) + t(1 − t)²d0 − t²(1 − t)d1.
        let u = 1.0 - t;
        v0 + t * t * (3.0 - 2.0 * t) * (v1 - v0) + t * u * (u * d0 - t * d1)
    }
}

/// Uniform buckets over the nodes (four per node): see [`HermiteTable::bucket`].
fn buckets(sigma: &[f64]) -> (Vec<u32>, f64) {
    let n = sigma.len();
    let nb = (4 * n).max(1);
    let span = (sigma[n - 1] - sigma[0]).max(f64::MIN_POSITIVE);
    let scale = nb as f64 / span;
    let mut bucket = Vec::with_capacity(nb);
    let mut i = 0usize;
    for b in 0..nb {
        let start = sigma[0] + b as f64 / scale;
        while i + 1 < n && sigma[i + 1] <= start {
            i += 1;
        }
        bucket.push(i as u32);
    }
    (bucket, scale)
}

/// Evaluate `g` at every point, on all available threads when there are many.
pub(crate) fn par_map(points: &[f64], g: &(impl Fn(f64) -> (f64, f64) + Sync)) -> Vec<(f64, f64)> {
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get()).min(points.len().max(1));
    if threads <= 1 || points.len() < 4 {
        return points.iter().map(|&p| g(p)).collect();
    }
    let chunk = points.len().div_ceil(threads);
    std::thread::scope(|scope| {
        let handles: Vec<_> = points
            .chunks(chunk)
            .map(|c| scope.spawn(move || c.iter().map(|&p| g(p)).collect::<Vec<_>>()))
            .collect();
        handles.into_iter().flat_map(|h| h.join().unwrap_or_default()).collect()
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A function with both behaviours the stretch is made for (`1/√(ρ² + a²)`: analytic near
    /// 0, a series in `1/ρ` far away) is tabulated to the requested tolerance everywhere, not
    /// only at the checked midpoints.
    #[test]
    fn table_meets_its_tolerance_between_checks() {
        let a = 2e-4;
        let f = |r: f64| {
            let q = (r * r + a * a).sqrt();
            (1.0 / q, -r / (q * q * q))
        };
        let tol = 1e-8;
        let t = HermiteTable::build(0.0, a, 0.05, &f, |_, v| tol * v.abs(), 10_000).unwrap();
        let mut worst: f64 = 0.0;
        for i in 0..20_000 {
            let r = 0.05 * (i as f64 / 19_999.0).powi(3);
            worst = worst.max((t.eval(r) - f(r).0).abs() / f(r).0);
        }
        assert!(worst <= 2.0 * tol, "worst relative error {worst:e} with {} nodes", t.nodes());
        assert!(t.nodes() < 2000, "{} nodes", t.nodes());
    }

    /// A table from a non-zero origin, and the cap on its size.
    #[test]
    fn origin_and_node_cap() {
        let f = |r: f64| ((-r).exp(), -(-r).exp());
        let t = HermiteTable::build(1.0, 1.0, 20.0, &f, |_, v| 1e-9 * v.abs(), 10_000).unwrap();
        for r in [1.0, 1.3, 4.7, 19.9] {
            assert!((t.eval(r) - (-r).exp()).abs() <= 2e-9 * (-r).exp(), "{r}");
        }
        assert_eq!(HermiteTable::build(1.0, 1.0, 20.0, &f, |_, _| 0.0, 100).unwrap_err(), TooManyNodes);
    }
}
