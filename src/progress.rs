//! How far one long computation has got, for whoever is listening.
//!
//! A long single step (a bandwidth search, a surface, DBSCAN, the k-distance
//! curve, the simulations of the quadrat and Clark–Evans tests) calls
//! [`report`]`(done, total)` from its loop. Nothing happens unless a listener was set with [`listen`] on the
//! same thread: then the listener gets the fraction done, at most about a
//! hundred times per computation (each time the fraction has grown by at
//! least 1 %, and once at 100 %). The page's engine listens and shows the
//! fraction beside Cancel; native callers and the Node API do not.
//!
//! A computation made of several long parts maps each part onto a share of
//! the whole with [`part`], so the fraction keeps growing from 0 to 1.
//!
//! Loops should call [`report`] every few thousand iterations (it reads a
//! thread-local), not on every one.

use std::cell::{Cell, RefCell};

type Listener = Box<dyn Fn(f64)>;

thread_local! {
    static LISTENER: RefCell<Option<Listener>> = const { RefCell::new(None) };
    /// The share of the whole that the current part covers: [lo, hi).
    static PART: Cell<(f64, f64)> = const { Cell::new((0.0, 1.0)) };
    /// The last fraction passed to the listener.
    static LAST: Cell<f64> = const { Cell::new(-1.0) };
}

/// Sets the listener of this thread (replacing any earlier one).
pub fn listen(f: impl Fn(f64) + 'static) {
    LISTENER.with(|l| *l.borrow_mut() = Some(Box::new(f)));
    LAST.with(|c| c.set(-1.0));
}

/// Removes the listener of this thread.
pub fn stop_listening() {
    LISTENER.with(|l| *l.borrow_mut() = None);
}

/// Starts a new computation: the next report starts from 0 again.
pub fn begin() {
    LAST.with(|c| c.set(-1.0));
    PART.with(|p| p.set((0.0, 1.0)));
}

/// `done` of `total` units of the current part are done.
pub fn report(done: usize, total: usize) {
    report_in(0.0, 1.0, done, total);
}

/// `done` of `total` units of the stretch from fraction `from` to `to` of
/// the current part are done (for a function with several stages).
pub fn report_in(from: f64, to: f64, done: usize, total: usize) {
    if total == 0 {
        return;
    }
    let has = LISTENER.with(|l| l.borrow().is_some());
    if !has {
        return;
    }
    let (lo, hi) = PART.with(|p| p.get());
    let (lo, hi) = (lo + (hi - lo) * from, lo + (hi - lo) * to);
    let f = lo + (hi - lo) * (done.min(total) as f64 / total as f64);
    let last = LAST.with(|c| c.get());
    if f >= last + 0.01 || (f >= 1.0 && last < 1.0) {
        LAST.with(|c| c.set(f));
        LISTENER.with(|l| {
            if let Some(cb) = l.borrow().as_ref() {
                cb(f);
            }
        });
    }
}

/// Runs `f` as the part of the whole from fraction `from` to `to` (of the
/// part that is current now), then restores the current part.
pub fn part<T>(from: f64, to: f64, f: impl FnOnce() -> T) -> T {
    let outer = PART.with(|p| p.get());
    let (lo, hi) = outer;
    PART.with(|p| p.set((lo + (hi - lo) * from, lo + (hi - lo) * to)));
    let out = f();
    PART.with(|p| p.set(outer));
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::rc::Rc;

    #[test]
    fn fractions_grow_in_steps_of_a_hundredth_and_end_at_one() {
        let seen = Rc::new(RefCell::new(Vec::new()));
        let s = seen.clone();
        listen(move |f| s.borrow_mut().push(f));
        begin();
        for i in 0..=10_000 {
            report(i, 10_000);
        }
        stop_listening();
        let v = seen.borrow();
        assert!(v.len() >= 100 && v.len() <= 102, "{}", v.len());
        assert!(v.windows(2).all(|w| w[1] > w[0]));
        assert_eq!(*v.last().unwrap(), 1.0);
        // Without a listener nothing is called and nothing fails.
        report(5, 10);
    }

    #[test]
    fn parts_map_onto_their_share() {
        let seen = Rc::new(RefCell::new(Vec::new()));
        let s = seen.clone();
        listen(move |f| s.borrow_mut().push(f));
        begin();
        part(0.0, 0.25, || {
            for i in 0..=4 {
                report(i, 4);
            }
        });
        part(0.25, 1.0, || {
            part(0.0, 0.5, || report(1, 1));
            report_in(0.5, 0.9, 1, 2);
            report(1, 1);
        });
        stop_listening();
        let v = seen.borrow();
        assert_eq!(
            *v,
            vec![0.0, 0.0625, 0.125, 0.1875, 0.25, 0.625, 0.775, 1.0]
        );
    }
}
