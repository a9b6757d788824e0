//! Rainflow counting of a load history: the three-point method of ASTM E1049-85 (reapproved
//! 2017), section 5.4.4, "Standard Practices for Cycle Counting in Fatigue Analysis".
//!
//! A fatigue law sums damage over counted cycles, each with its own range, mean and the time
//! of its peak. A duty cycle repeats, so it is counted as a periodic history: started at its
//! largest value and closed there, every range pairs into a full cycle and no half cycles
//! remain (the rearrangement the standard allows for repeating histories; S. D. Downing,
//! D. F. Socie, Int. J. Fatigue 4 (1982) 31).

/// One counted cycle (or half cycle) of a history.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CountedCycle {
    /// Peak-to-valley range (always ≥ 0).
    pub range: f64,
    /// Mean of the peak and the valley.
    pub mean: f64,
    /// 1 for a full cycle, ½ for a half cycle.
    pub count: f64,
    /// The higher and the lower point of the cycle.
    pub high: f64,
    pub low: f64,
    /// Index into the history of the higher and the lower point of the cycle.
    pub high_index: usize,
    pub low_index: usize,
}

impl CountedCycle {
    fn between(history: &[f64], a: usize, b: usize, count: f64) -> CountedCycle {
        let (high_index, low_index) = if history[a] >= history[b] { (a, b) } else { (b, a) };
        let (high, low) = (history[high_index], history[low_index]);
        CountedCycle { range: high - low, mean: 0.5 * (high + low), count, high, low, high_index, low_index }
    }
}

/// Indices of the reversals (peaks and valleys) of `order`, an index sequence into `history`:
/// its first and last points and every point where the direction changes; runs of equal values
/// count once.
fn reversals(history: &[f64], order: impl Iterator<Item = usize>, out: &mut Vec<usize>) {
    out.clear();
    for i in order {
        let x = history[i];
        match out.len() {
            0 => out.push(i),
            _ if history[out[out.len() - 1]] == x => {}
            1 => out.push(i),
            n => {
                let (before, last) = (history[out[n - 2]], history[out[n - 1]]);
                if (last - before) * (x - last) > 0.0 {
                    // Still rising or still falling: the run's end moves on.
                    out[n - 1] = i;
                } else {
                    out.push(i);
                }
            }
        }
    }
}

/// The three-point method over reversals; `periodic` counts every extracted range as a full
/// cycle (valid for a history rearranged to start and end at its maximum), otherwise ranges
/// that contain the starting point and the residue count as half cycles, as the standard does
/// for a history read once.
fn three_point(history: &[f64], points: &[usize], periodic: bool, emit: &mut impl FnMut(CountedCycle)) {
    let mut stack: Vec<usize> = Vec::with_capacity(points.len());
    for &p in points {
        stack.push(p);
        while stack.len() >= 3 {
            let n = stack.len();
            let x = (history[stack[n - 1]] - history[stack[n - 2]]).abs();
            let y = (history[stack[n - 2]] - history[stack[n - 3]]).abs();
            if x < y {
                break;
            }
            if n == 3 && !periodic {
                // Y contains the starting point: half a cycle, and the start moves on.
                emit(CountedCycle::between(history, stack[0], stack[1], 0.5));
                stack.remove(0);
            } else {
                emit(CountedCycle::between(history, stack[n - 3], stack[n - 2], 1.0));
                stack.drain(n - 3..n - 1);
            }
        }
    }
    for pair in stack.windows(2) {
        emit(CountedCycle::between(history, pair[0], pair[1], if periodic { 1.0 } else { 0.5 }));
    }
}

/// Rainflow count of a history read once (ASTM E1049-85 §5.4.4, with half cycles).
pub fn count_once(history: &[f64]) -> Vec<CountedCycle> {
    let mut points = Vec::new();
    reversals(history, 0..history.len(), &mut points);
    let mut cycles = Vec::new();
    three_point(history, &points, false, &mut |c| cycles.push(c));
    cycles
}

/// Rainflow count of one period of a repeating history: the history is read from its largest
/// value round to it again, so every cycle is full. The last sample is taken to be the first
/// of the next period (a periodic trace ends where it starts), so it is not read twice.
/// Cycles are handed to `emit`; `scratch` holds the reversals between calls.
pub fn count_periodic(history: &[f64], scratch: &mut Vec<usize>, mut emit: impl FnMut(CountedCycle)) {
    let n = history.len();
    if n < 2 {
        return;
    }
    let period = n - 1;
    let start = (0..period).fold(0, |best, i| if history[i] > history[best] { i } else { best });
    let order = (0..=period).map(|k| (start + k) % period);
    reversals(history, order, scratch);
    three_point(history, scratch, true, &mut emit);
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Counts summed by range, as the standard tabulates them.
    fn by_range(cycles: &[CountedCycle]) -> Vec<(f64, f64)> {
        let mut out: Vec<(f64, f64)> = Vec::new();
        let mut sorted: Vec<_> = cycles.iter().map(|c| (c.range, c.count)).collect();
        sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
        for (range, count) in sorted {
            match out.last_mut() {
                Some(last) if (last.0 - range).abs() < 1e-9 => last.1 += count,
                _ => out.push((range, count)),
            }
        }
        out
    }

    fn assert_counts(actual: &[(f64, f64)], expected: &[(f64, f64)]) {
        assert_eq!(actual.len(), expected.len(), "{actual:?} vs {expected:?}");
        for (a, e) in actual.iter().zip(expected) {
            assert!((a.0 - e.0).abs() < 1e-9 && (a.1 - e.1).abs() < 1e-12, "{actual:?} vs {expected:?}");
        }
    }

    #[test]
    fn the_standards_worked_example() {
        // ASTM E1049-85 (2017), Fig. 6 and its table of rainflow counts: history
        // −2, 1, −3, 5, −1, 3, −4, 4, −2 gives ranges 3 (½), 4 (1½), 6 (½), 8 (1), 9 (½).
        let cycles = count_once(&[-2.0, 1.0, -3.0, 5.0, -1.0, 3.0, -4.0, 4.0, -2.0]);
        assert_counts(&by_range(&cycles), &[(3.0, 0.5), (4.0, 1.5), (6.0, 0.5), (8.0, 1.0), (9.0, 0.5)]);
    }

    /// Uniform draws on [−10, 10] rounded to 0.01: Python 3.11 `random.seed(7)`,
    /// `[round(random.uniform(-10, 10), 2) for _ in range(40)]`.
    const HISTORY_A: [f64; 40] = [
        -3.52, -6.98, 3.02, -8.55, 0.72, -2.69, -8.84, 0.15, -9.25, -1.33, -8.6, -8.19, -1.51, 6.54, -7.52, -5.54,
        2.55, 8.95, 1.54, -2.07, 9.53, -9.07, 7.17, -4.21, -7.11, -7.64, -3.83, 6.32, -6.39, 1.63, 2.78, -2.55, 0.95,
        -8.74, -8.81, -5.88, 3.61, -1.45, -3.72, 1.71,
    ];

    /// Normal draws (σ = 5) rounded to 0.001: `random.seed(11)`,
    /// `[round(random.gauss(0, 5), 3) for _ in range(60)]`.
    const HISTORY_B: [f64; 60] = [
        -6.12, 1.888, 4.975, -2.566, -6.645, -0.328, 2.39, 5.491, -6.079, -6.464, 3.53, 2.37, 7.669, 4.912, -0.509,
        -1.371, 12.853, -1.444, -3.925, -5.692, 0.477, 0.727, -1.724, -0.311, 1.365, 3.462, 5.484, 1.049, -8.949,
        3.509, -7.098, -0.857, -7.369, 0.011, -3.893, 1.069, 16.502, -0.243, 4.212, -6.617, -1.44, 3.312, -0.463,
        1.851, 0.517, -5.031, 2.819, -4.06, 9.359, -2.526, 3.43, 0.012, 4.762, -3.011, 4.994, -0.619, 6.317, 3.121,
        0.706, -3.901,
    ];

    #[test]
    fn random_histories_match_a_reference_implementation() {
        // Reference: PyPI package `rainflow` 3.2.0 (implements ASTM E1049-85), run once:
        // `python -c "import rainflow; print(rainflow.count_cycles(HISTORY))"`.
        let reference_a = [
            (3.46, 0.5),
            (3.5, 1.0),
            (5.43, 0.5),
            (7.27, 1.0),
            (7.33, 0.5),
            (8.99, 1.0),
            (9.17, 1.0),
            (9.27, 1.0),
            (10.0, 0.5),
            (11.02, 1.0),
            (12.27, 0.5),
            (12.42, 0.5),
            (13.96, 1.0),
            (14.06, 1.0),
            (15.98, 0.5),
            (16.24, 0.5),
            (18.6, 0.5),
            (18.78, 0.5),
        ];
        assert_counts(&by_range(&count_once(&HISTORY_A)), &reference_a);
        let reference_b = [
            (1.16, 1.0),
            (2.314, 1.0),
            (2.451, 1.0),
            (3.418, 1.0),
            (3.904, 1.0),
            (4.455, 1.0),
            (5.613, 1.0),
            (6.241, 1.0),
            (6.879, 1.0),
            (7.288, 1.0),
            (8.343, 1.0),
            (9.04, 1.0),
            (9.328, 1.0),
            (10.878, 1.0),
            (11.095, 0.5),
            (11.176, 1.0),
            (11.62, 0.5),
            (11.955, 1.0),
            (13.26, 0.5),
            (15.976, 0.5),
            (19.498, 0.5),
            (21.802, 0.5),
            (23.119, 0.5),
            (25.451, 0.5),
        ];
        assert_counts(&by_range(&count_once(&HISTORY_B)), &reference_b);
    }

    #[test]
    fn a_repeating_history_counts_full_cycles_only() {
        // Reference: the same package on history A rearranged to start and end at its maximum
        // (`i = a.index(max(a)); rainflow.count_cycles(a[i:] + a[:i] + [a[i]])`).
        let reference = [
            (3.5, 1.0),
            (5.43, 1.0),
            (7.27, 1.0),
            (8.99, 1.0),
            (9.17, 1.0),
            (9.27, 1.0),
            (10.0, 1.0),
            (11.02, 1.0),
            (12.42, 1.0),
            (13.96, 1.0),
            (14.06, 1.0),
            (16.24, 1.0),
            (18.78, 1.0),
        ];
        // A periodic trace repeats its first sample at the end.
        let mut periodic = HISTORY_A.to_vec();
        periodic.push(HISTORY_A[0]);
        let mut cycles = Vec::new();
        count_periodic(&periodic, &mut Vec::new(), |c| cycles.push(c));
        assert_counts(&by_range(&cycles), &reference);
        // Every cycle's recorded points carry its values.
        for c in &cycles {
            assert_eq!(periodic[c.high_index], c.high);
            assert_eq!(periodic[c.low_index], c.low);
        }
    }

    #[test]
    fn n_identical_pulses_are_n_cycles() {
        let mut history = vec![0.0];
        for _ in 0..6 {
            history.extend([0.5, 2.0, 1.0, 0.0]);
        }
        let mut cycles = Vec::new();
        count_periodic(&history, &mut Vec::new(), |c| cycles.push(c));
        assert_counts(&by_range(&cycles), &[(2.0, 6.0)]);
        // A flat history has nothing to count.
        let mut none = 0;
        count_periodic(&[1.0; 5], &mut Vec::new(), |_| none += 1);
        assert_eq!(none, 0);
    }
}
