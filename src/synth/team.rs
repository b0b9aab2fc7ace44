//! Parallel steps for the shaper whose waiting threads poll instead of sleeping.
//!
//! A worker of rayon's pool that finds no job yields about 32 times and then sleeps, and so
//! does a thread waiting for the other half of a `join`. Waking one costs tens of µs on this
//! machine's virtual cores, longer than the gaps between the shaper's parallel steps (one
//! per 12 288 samples and level, each a few tens of µs of work per thread). A
//! microbenchmark of `rayon::join` on two equal 40–80 µs tasks lost 10–25 µs per join that
//! way; with both threads polling, under 1 µs (measured 2026-12-03).
//!
//! [`each`] runs tasks with the calling worker polling for them to finish; [`with_helpers`]
//! keeps the pool's other workers polling for jobs while a closure runs. A thread that has
//! polled for [`PATIENCE`] without finding a job goes back to rayon's own waiting, so that
//! fills running at once on one pool (a library caller's tasks) never hold each other up for
//! long. Which thread runs which task never changes a result: tasks write only their own
//! outputs.

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::time::{Duration, Instant};

/// How long a polling thread goes on without finding a job before it falls back to rayon's
/// own waiting (which sleeps). Far above the gaps inside a fill (a few µs to tens of µs), so
/// it does not end in the middle of one; it bounds what polling can cost when a thread is
/// held elsewhere, and makes sure no helper outlives the work it is meant for.
const PATIENCE: Duration = Duration::from_micros(500);

/// Runs jobs of the pool on this thread while `more()` holds, until none has turned up for
/// [`PATIENCE`].
fn poll_while(more: impl Fn() -> bool) {
    let mut last_job = Instant::now();
    while more() {
        if rayon::yield_now() == Some(rayon::Yield::Executed) {
            last_job = Instant::now();
        } else if last_job.elapsed() > PATIENCE {
            return;
        } else {
            std::hint::spin_loop();
        }
    }
}

/// Runs `f(i, &mut tasks[i])` for every task, in parallel on the current rayon pool, and
/// returns when all have run. The calling worker runs task 0, then whatever is left from the
/// end of the list, while idle workers take tasks from the front: an order in which similar
/// tasks should alternate with their share of smaller ones. Off a worker (or on a pool of
/// one thread) the tasks run in order on the calling thread.
///
/// # Panics
/// If a task panics, once every task has finished or panicked.
pub fn each<T: Send>(tasks: &mut [T], f: impl Fn(usize, &mut T) + Sync) {
    let me = rayon::current_thread_index();
    if me.is_none() || rayon::current_num_threads() < 2 || tasks.len() < 2 {
        tasks.iter_mut().enumerate().for_each(|(i, t)| f(i, t));
        return;
    }
    let left = AtomicUsize::new(tasks.len());
    let f = &f;
    rayon::in_place_scope(|scope| {
        let (first, rest) = tasks.split_first_mut().expect("two tasks or more");
        for (i, task) in rest.iter_mut().enumerate() {
            let left = &left;
            scope.spawn(move |_| {
                let _done = Countdown(left);
                f(i + 1, task);
            });
        }
        {
            let _done = Countdown(&left);
            f(0, first);
        }
        // The scope waits for the rest too, but may sleep while it does: poll first.
        poll_while(|| left.load(Ordering::Acquire) > 0);
    });
}

/// Runs `f` on this worker while the pool's other workers poll for jobs (and run them at
/// once) instead of sleeping; they stop when `f` returns or panics, or after [`PATIENCE`]
/// without a job. Off a worker, or on a pool of one thread, `f` just runs.
pub fn with_helpers<R>(f: impl FnOnce() -> R) -> R {
    let me = rayon::current_thread_index();
    let others = rayon::current_num_threads().saturating_sub(1);
    if me.is_none() || others == 0 {
        return f();
    }
    let running = AtomicBool::new(true);
    rayon::in_place_scope(|scope| {
        for _ in 0..others {
            let running = &running;
            scope.spawn(move |_| {
                // The spawning thread only gets here once `f` is done (it must not wait in
                // here for itself).
                if rayon::current_thread_index() == me {
                    return;
                }
                poll_while(|| running.load(Ordering::Acquire));
            });
        }
        let _stop = Lowered(&running);
        f()
    })
}

/// Counts a task as finished when dropped, also when it panicked.
struct Countdown<'a>(&'a AtomicUsize);

impl Drop for Countdown<'_> {
    fn drop(&mut self) {
        self.0.fetch_sub(1, Ordering::Release);
    }
}

/// Sets its flag false when dropped, also when the closure panicked.
struct Lowered<'a>(&'a AtomicBool);

impl Drop for Lowered<'_> {
    fn drop(&mut self) {
        self.0.store(false, Ordering::Release);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pool(threads: usize) -> rayon::ThreadPool {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
    }

    #[test]
    fn every_task_runs_once_with_its_own_index() {
        for threads in [1, 2, 3] {
            let got = pool(threads).install(|| {
                with_helpers(|| {
                    let mut tasks: Vec<(usize, u32)> = vec![(usize::MAX, 0); 37];
                    each(&mut tasks, |i, t| {
                        t.0 = i;
                        t.1 += 1;
                    });
                    tasks
                })
            });
            for (i, t) in got.iter().enumerate() {
                assert_eq!(*t, (i, 1), "{threads} threads, task {i}");
            }
        }
        // Off any pool.
        let mut tasks = vec![0usize; 5];
        each(&mut tasks, |i, t| *t = i * i);
        assert_eq!(tasks, [0, 1, 4, 9, 16]);
    }

    #[test]
    fn a_panicking_task_ends_the_step_with_its_panic() {
        let r = pool(2).install(|| {
            std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                with_helpers(|| {
                    let mut tasks = vec![0u8; 8];
                    each(&mut tasks, |i, _| assert!(i != 5, "task 5 fails"));
                })
            }))
        });
        assert!(r.is_err());
    }
}
