//! Stable sorting through one shared copy of the standard library's sort.
//!
//! `slice::sort_by` is generic over both the element type and the comparison closure, so
//! every call site compiles its own copy of the whole sort (about 4 KB of WebAssembly
//! each, some twenty sites). [`sort_by`] and [`sort_by_key`] sort a list of positions with
//! the comparison behind `dyn`, which compiles the standard sort once, then move the
//! elements into that order. The order they give is exactly `slice::sort_by`'s: the sort
//! is stable (equal elements keep their order) and, with a consistent comparison, a stable
//! sort has only one possible result. The sorting itself stays the standard library's.

use std::cmp::Ordering;

/// Sorts `v` stably by `cmp`, in the order `v.sort_by(cmp)` gives.
pub fn sort_by<T>(v: &mut [T], mut cmp: impl FnMut(&T, &T) -> Ordering) {
    let mut order: Vec<usize> = (0..v.len()).collect();
    sort_positions(&mut order, &mut |a, b| cmp(&v[a], &v[b]));
    permute(v, &mut order);
}

/// Sorts `v` stably by `key`, in the order `v.sort_by_key(key)` gives.
pub fn sort_by_key<T, K: Ord>(v: &mut [T], mut key: impl FnMut(&T) -> K) {
    sort_by(v, |a, b| key(a).cmp(&key(b)));
}

/// The one instance of the standard stable sort: positions, compared through `cmp`.
#[allow(clippy::disallowed_methods)] // the one permitted call of the standard sort
fn sort_positions(order: &mut [usize], cmp: &mut dyn FnMut(usize, usize) -> Ordering) {
    order.sort_by(|&a, &b| cmp(a, b));
}

/// Rearranges `v` so that place `i` holds the element that was at `order[i]`: each cycle
/// of the permutation is followed once, with swaps, and its places are marked done in
/// `order` (a place that holds its own index needs no move).
fn permute<T>(v: &mut [T], order: &mut [usize]) {
    for start in 0..v.len() {
        let mut at = start;
        loop {
            let from = order[at];
            order[at] = at;
            if from == start {
                break;
            }
            v.swap(at, from);
            at = from;
        }
    }
}

#[cfg(test)]
#[allow(clippy::disallowed_methods)] // the standard sort is the reference here
mod tests {
    use super::*;

    #[test]
    fn matches_the_standard_stable_sort() {
        // Keys with many ties (the second field tells equal keys apart) in a scrambled order.
        let mut seed = 12345u64;
        for n in [0, 1, 2, 3, 7, 20, 21, 64, 500] {
            let v: Vec<(u32, usize)> = (0..n)
                .map(|i| {
                    seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
                    ((seed >> 59) as u32, i)
                })
                .collect();
            let mut want = v.clone();
            want.sort_by_key(|a| a.0);
            let mut got = v.clone();
            sort_by(&mut got, |a, b| a.0.cmp(&b.0));
            assert_eq!(got, want, "n = {n}");
            let mut got = v.clone();
            sort_by_key(&mut got, |a| std::cmp::Reverse(a.0));
            want = v.clone();
            want.sort_by_key(|a| std::cmp::Reverse(a.0));
            assert_eq!(got, want, "n = {n}, reversed");
        }
    }

    #[test]
    fn floats_by_total_order() {
        let mut v = vec![3.0, -0.0, f64::NAN, 0.0, -1.5, f64::INFINITY, 2.0];
        let mut want = v.clone();
        want.sort_by(f64::total_cmp);
        sort_by(&mut v, f64::total_cmp);
        assert_eq!(format!("{v:?}"), format!("{want:?}"));
    }
}
