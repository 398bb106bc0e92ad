//! Parallel work handed on in input order with a bounded look-ahead: the
//! driver of `map`, which writes each finished slice as soon as every
//! slice before it has been written, so a map holds at most a window of
//! finished slices beyond what it has written, however many slices it has.

use std::collections::BTreeMap;
use std::sync::{Condvar, Mutex};

/// What [`run_ordered`] did: how many results it handed on and the most
/// finished results it held at once while waiting for an earlier one.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct OrderedStats {
    /// Results handed to the sink.
    pub handed: usize,
    /// Largest number of finished results held at once, waiting for an
    /// earlier item (at most the window).
    pub peak_held: usize,
}

/// Why [`run_ordered`] stopped early.
#[derive(Debug, PartialEq, Eq)]
pub enum OrderedStop<E> {
    /// `work` returned `None` (the run was cancelled).
    Cancelled,
    /// The sink refused a result.
    Sink(E),
}

struct State<T> {
    /// Position (in `items`) of the next item a worker takes.
    next_take: usize,
    /// Position of the next result the sink takes.
    next_give: usize,
    /// Finished results not yet handed on, by position.
    held: BTreeMap<usize, Option<T>>,
    /// Set when the run stops early: workers take no more items.
    stop: bool,
    peak: usize,
    /// The panic of a worker's `work`, re-raised on the calling thread.
    panic: Option<Box<dyn std::any::Any + Send>>,
}

/// Stops the workers when dropped: at the end of the run, and when the
/// calling thread unwinds (a panicking sink), so that no worker waits for
/// a window that will not move and the scope can join them.
struct StopOnDrop<'a, T> {
    state: &'a Mutex<State<T>>,
    changed: &'a Condvar,
}

impl<T> Drop for StopOnDrop<'_, T> {
    fn drop(&mut self) {
        let mut s = self.state.lock().unwrap_or_else(|e| e.into_inner());
        s.stop = true;
        self.changed.notify_all();
    }
}

/// Runs `work(item)` for every item on `threads` worker threads (at least
/// one) and hands each result to `sink` on the calling thread in the order
/// of `items`. A worker takes item k only while k < g + `window` (g: the
/// position of the next result the sink is waiting for), so at most
/// `window` finished results (and at most `threads` in progress) are held
/// at any time, whatever the number of items. The results and their order
/// do not depend on `threads` or `window` as long as `work` is a function
/// of its item.
///
/// `work` returning `None` cancels the run (workers take no more items;
/// [`OrderedStop::Cancelled`]); `sink` returning an error stops it too. A
/// panic in `work` or `sink` stops the workers and is re-raised on the
/// calling thread once they have ended.
pub fn run_ordered<I, T, E>(
    items: &[I],
    threads: usize,
    window: usize,
    work: impl Fn(&I) -> Option<T> + Sync,
    mut sink: impl FnMut(T) -> Result<(), E>,
) -> Result<OrderedStats, OrderedStop<E>>
where
    I: Sync,
    T: Send,
{
    let window = window.max(1);
    let state = Mutex::new(State {
        next_take: 0,
        next_give: 0,
        held: BTreeMap::new(),
        stop: false,
        peak: 0,
        panic: None,
    });
    let changed = Condvar::new();
    // a poisoned lock means a worker panicked: std::thread::scope re-raises
    // that panic when the scope ends, so here it only needs to stop waiting
    let lock = || state.lock().unwrap_or_else(|e| e.into_inner());
    let worker = || {
        loop {
            let k = {
                let mut s = lock();
                while !s.stop && s.next_take < items.len() && s.next_take >= s.next_give + window {
                    s = changed.wait(s).unwrap_or_else(|e| e.into_inner());
                }
                if s.stop || s.next_take >= items.len() {
                    return;
                }
                s.next_take += 1;
                s.next_take - 1
            };
            let r = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| work(&items[k])));
            let mut s = lock();
            match r {
                Ok(r) => {
                    s.held.insert(k, r);
                    s.peak = s.peak.max(s.held.len());
                }
                Err(p) => {
                    s.stop = true;
                    s.panic.get_or_insert(p);
                }
            }
            changed.notify_all();
        }
    };
    std::thread::scope(|scope| {
        for _ in 0..threads.max(1) {
            scope.spawn(worker);
        }
        let _stop = StopOnDrop {
            state: &state,
            changed: &changed,
        };
        let mut handed = 0;
        let stop = |why| {
            let mut s = lock();
            s.stop = true;
            changed.notify_all();
            Err(why)
        };
        while handed < items.len() {
            let next = {
                let mut s = lock();
                loop {
                    if let Some(p) = s.panic.take() {
                        drop(s);
                        // _stop stops the other workers as this unwinds
                        std::panic::resume_unwind(p);
                    }
                    if let Some(r) = s.held.remove(&handed) {
                        s.next_give = handed + 1;
                        changed.notify_all();
                        break r;
                    }
                    s = changed.wait(s).unwrap_or_else(|e| e.into_inner());
                }
            };
            let Some(r) = next else {
                return stop(OrderedStop::Cancelled);
            };
            if let Err(e) = sink(r) {
                return stop(OrderedStop::Sink(e));
            }
            handed += 1;
        }
        Ok(OrderedStats {
            handed,
            peak_held: lock().peak,
        })
    })
}
