//! The worker pool: a map over a slice on a few scoped threads, results
//! in input order (so output never depends on the thread count). Files are
//! read and analysed, sections solved and findings rendered on it; a call
//! made from inside a worker runs on that worker's thread.

use std::sync::atomic::{AtomicUsize, Ordering};

/// Workers for the parallel parts of a run (`--threads`).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Pool {
    threads: usize,
}

impl Pool {
    /// A pool of `threads` workers (0: one per available core).
    pub fn new(threads: usize) -> Pool {
        Pool { threads }
    }

    /// One worker: everything runs on the calling thread.
    pub fn single() -> Pool {
        Pool { threads: 1 }
    }

    /// The number of workers asked for (0: one per core).
    pub fn threads(&self) -> usize {
        self.threads
    }

    /// Map `f` over `items` on the workers; results in input order, so
    /// output does not depend on the number of threads.
    pub fn map<T: Sync, R: Send>(&self, items: &[T], f: impl Fn(&T) -> R + Sync) -> Vec<R> {
        map(self.threads, items, f)
    }
}

fn map<T: Sync, R: Send>(wanted: usize, items: &[T], f: impl Fn(&T) -> R + Sync) -> Vec<R> {
    let threads = if wanted > 0 {
        wanted
    } else {
        std::thread::available_parallelism().map_or(1, |n| n.get())
    }
    .min(items.len().max(1));
    // Nested calls (a file's analysis on a worker that analyses files)
    // run on their caller's thread: the outer call already keeps every
    // core busy, and spawning per file costs more than it gains.
    if threads <= 1 || IN_WORKER.with(|w| w.get()) {
        return items.iter().map(&f).collect();
    }
    let f = &f;
    // Items are handed out one at a time from a shared counter, so a few
    // slow items do not leave the other workers idle; results are put back
    // in item order, so the output does not depend on the schedule. The
    // calling thread is one of the workers; a thread that cannot be
    // spawned (a process or memory limit) only leaves fewer workers.
    let next = AtomicUsize::new(0);
    let next = &next;
    let work = move || {
        let was = IN_WORKER.with(|w| w.replace(true));
        let mut done = Vec::new();
        loop {
            let i = next.fetch_add(1, Ordering::Relaxed);
            let Some(x) = items.get(i) else { break };
            done.push((i, f(x)));
        }
        IN_WORKER.with(|w| w.set(was));
        done
    };
    let mut parts: Vec<Vec<(usize, R)>> = std::thread::scope(|scope| {
        let mut handles = Vec::new();
        for _ in 1..threads {
            match std::thread::Builder::new().spawn_scoped(scope, work) {
                Ok(h) => handles.push(h),
                Err(_) => break,
            }
        }
        let mut parts = vec![work()];
        parts.extend(
            handles
                .into_iter()
                .map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e))),
        );
        parts
    });
    let mut out: Vec<(usize, R)> = parts.drain(..).flatten().collect();
    out.sort_by_key(|(i, _)| *i);
    out.into_iter().map(|(_, r)| r).collect()
}

thread_local! {
    /// Set on a thread while it works for a pool.
    static IN_WORKER: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}
