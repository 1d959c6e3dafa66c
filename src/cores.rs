//! Native threads for the Rust library and tools. The page's engine
//! (wasm32) runs on one thread and splits long work into steps instead;
//! there, [`threads_for`] is always 1.

use std::ops::Range;

/// Threads to use for `items` pieces of work when each thread should get
/// at least `per_thread` of them: the machine's cores, fewer when there is
/// not enough work; always 1 in the page's engine (wasm32).
pub fn threads_for(items: usize, per_thread: usize) -> usize {
    #[cfg(not(target_arch = "wasm32"))]
    {
        let cores = std::thread::available_parallelism().map_or(1, |c| c.get());
        cores.min(items / per_thread.max(1)).max(1)
    }
    #[cfg(target_arch = "wasm32")]
    {
        let _ = (items, per_thread);
        1
    }
}

/// `threads` contiguous ranges covering `0..n`, in order (as equal as
/// whole items allow; none empty unless `n` is 0).
pub fn ranges(n: usize, threads: usize) -> Vec<Range<usize>> {
    let t = threads.clamp(1, n.max(1));
    (0..t).map(|k| n * k / t..n * (k + 1) / t).collect()
}

/// Runs `work` on each job, one native thread per job, and returns the
/// results in the jobs' order; `None` if a thread failed (a panic), so the
/// caller can do the work on its own thread instead.
#[cfg(not(target_arch = "wasm32"))]
pub fn each_on_a_thread<J: Send, T: Send>(
    jobs: Vec<J>,
    work: impl Fn(J) -> T + Sync,
) -> Option<Vec<T>> {
    let work = &work;
    std::thread::scope(|scope| {
        let handles: Vec<_> = jobs
            .into_iter()
            .map(|j| scope.spawn(move || work(j)))
            .collect();
        handles.into_iter().map(|h| h.join().ok()).collect()
    })
}

/// `(a(), b())`, with `b` on a second native thread while `a` runs on
/// this one when `split` is true (and the build is native); otherwise one
/// after the other. Should the second thread fail, `b` is run again here.
pub fn both<A, B: Send>(split: bool, a: impl FnOnce() -> A, b: impl Fn() -> B + Sync) -> (A, B) {
    #[cfg(not(target_arch = "wasm32"))]
    if split {
        let b = &b;
        let (ra, rb) = std::thread::scope(|scope| {
            let h = scope.spawn(b);
            (a(), h.join().ok())
        });
        return (ra, rb.unwrap_or_else(b));
    }
    let _ = split;
    (a(), b())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_cover_in_order() {
        for n in [0, 1, 2, 7, 100, 1001] {
            for t in 1..10 {
                let r = ranges(n, t);
                assert!(!r.is_empty());
                assert_eq!(r[0].start, 0);
                assert_eq!(r.last().unwrap().end, n);
                for w in r.windows(2) {
                    assert_eq!(w[0].end, w[1].start);
                }
                if n > 0 {
                    assert!(r.iter().all(|x| !x.is_empty()), "n {n} t {t}: {r:?}");
                    assert_eq!(r.len(), t.min(n));
                }
            }
        }
    }

    #[test]
    fn results_come_back_in_order() {
        let out = each_on_a_thread((0..9).collect(), |j: usize| j * j).unwrap();
        assert_eq!(out, (0..9).map(|j| j * j).collect::<Vec<_>>());
        let failed = each_on_a_thread(vec![1, 0, 2], |j: usize| {
            assert!(j != 0, "deliberate");
            j
        });
        assert!(failed.is_none());
    }

    #[test]
    fn both_give_both_results() {
        for split in [false, true] {
            let data: Vec<u64> = (1..=1000).collect();
            let (a, b) = both(
                split,
                || data.iter().sum::<u64>(),
                || data.iter().map(|v| v * v).sum::<u64>(),
            );
            assert_eq!((a, b), (500_500, 333_833_500));
        }
    }

    #[test]
    fn one_thread_without_enough_work() {
        assert_eq!(threads_for(10, 100), 1);
        assert_eq!(threads_for(0, 0), 1);
        assert!(threads_for(1 << 40, 1) >= 1);
    }
}
