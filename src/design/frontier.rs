//! The cost–risk frontier: the designs no other design beats on both risk and cost (both smaller
//! is better).

/// Indices of the non-dominated points of `points` (risk, cost), both to be minimised, ordered by
/// risk then cost. A point is dominated when another is no worse on both and better on one; equal
/// points are all kept. Non-finite points are left out. Sorting by risk and keeping each point whose
/// cost is below every cost seen at a smaller risk: O(n log n).
pub fn pareto(points: &[(f64, f64)]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..points.len())
        .filter(|&i| points[i].0.is_finite() && points[i].1.is_finite())
        .collect();
    order.sort_by(|&i, &j| {
        points[i]
            .0
            .total_cmp(&points[j].0)
            .then(points[i].1.total_cmp(&points[j].1))
    });
    let mut kept: Vec<usize> = Vec::new();
    // the lowest cost at a strictly smaller risk, and the group of equal risk being read
    let mut best_before = f64::INFINITY;
    let mut k = 0;
    while k < order.len() {
        let risk = points[order[k]].0;
        let mut end = k;
        while end < order.len() && points[order[end]].0 == risk {
            end += 1;
        }
        // within a group of equal risk only the lowest cost survives (ties all kept)
        let low = points[order[k]].1;
        for &i in &order[k..end] {
            if points[i].1 == low && low < best_before {
                kept.push(i);
            }
        }
        best_before = best_before.min(low);
        k = end;
    }
    kept
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_small_case_by_hand() {
        let pts = [
            (1.0, 5.0),
            (2.0, 3.0),
            (2.0, 4.0),
            (3.0, 3.0),
            (4.0, 1.0),
            (1.0, 5.0),
        ];
        // (2,4) is beaten by (2,3); (3,3) by (2,3); the two (1,5) are equal and both kept
        assert_eq!(pareto(&pts), vec![0, 5, 1, 4]);
    }
}
