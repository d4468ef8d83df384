//! Columns are independent: their statistics and per-row detectors run on all cores
//! (scoped threads taking the next column from a shared counter), and the results come
//! back in column order so the alert engine sees them exactly as in a sequential run.

use std::sync::atomic::{AtomicUsize, Ordering};

/// Below this much work (values to look at) threads cost more than they save.
pub(crate) const PARALLEL_MIN_VALUES: usize = 50_000;

/// `items.iter().map(f).collect()`, on up to as many threads as the machine has cores
/// when `parallel` (and there are at least two items). Results are in item order.
pub(crate) fn map_in_order<T, R, F>(items: &[T], parallel: bool, f: F) -> Vec<R>
where
    T: Sync,
    R: Send,
    F: Fn(&T) -> R + Sync,
{
    let threads = if parallel {
        std::thread::available_parallelism()
            .map_or(1, |n| n.get())
            .min(items.len())
    } else {
        1
    };
    if threads <= 1 {
        return items.iter().map(f).collect();
    }
    let next = AtomicUsize::new(0);
    let work = || {
        let mut done: Vec<(usize, R)> = Vec::new();
        loop {
            let i = next.fetch_add(1, Ordering::Relaxed);
            let Some(item) = items.get(i) else { break };
            done.push((i, f(item)));
        }
        done
    };
    let mut done = std::thread::scope(|s| {
        let helpers: Vec<_> = (1..threads).map(|_| s.spawn(work)).collect();
        let mut done = work();
        for h in helpers {
            match h.join() {
                Ok(part) => done.extend(part),
                // A panic in a helper is a bug; pass it on unchanged.
                Err(payload) => std::panic::resume_unwind(payload),
            }
        }
        done
    });
    done.sort_unstable_by_key(|(i, _)| *i);
    done.into_iter().map(|(_, r)| r).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn results_come_back_in_order() {
        let items: Vec<u64> = (0..37).collect();
        let square = |x: &u64| x * x;
        let expected: Vec<u64> = items.iter().map(square).collect();
        assert_eq!(map_in_order(&items, true, square), expected);
        assert_eq!(map_in_order(&items, false, square), expected);
        assert!(map_in_order(&[] as &[u64], true, square).is_empty());
    }
}
