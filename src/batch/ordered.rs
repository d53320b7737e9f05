//! An ordered parallel map with bounded memory, for the batch: sources are turned into jobs one by
//! one by a planner that keeps state (sidecar and model caches), the jobs run on a rayon pool, and
//! their results are handed back in the sources' order, each as soon as it and every one before it
//! are done. So a summary row is written the moment it can be, and a run stopped at any point has
//! lost at most the captures still in the workers' hands.
//!
//! At most `window` sources are between planning and hand-back at any time: the planner waits
//! when it is that far ahead of the oldest result not yet handed back. Memory therefore stays
//! bounded by the window, whatever the number of sources, and one slow capture holds back at most
//! a window's worth of finished ones.

use std::collections::BTreeMap;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc;
use std::sync::{Condvar, Mutex};

/// Why [`ordered_map`] stopped early.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Stopped {
    /// `take` returned this error.
    Take(String),
    /// `work` panicked on the source at this index (a bug: the rest was not processed).
    Panicked(usize),
    /// The machine would not start one of the run's own threads (memory or a thread limit).
    NoThread(String),
}

/// Plans every source with `plan` (in order, on one thread), runs `work` on each job on `pool`
/// with `workers` threads, and gives each result to `take` in the sources' order. Stops at the
/// first error `take` returns, or at a panic in `work`, and says which.
pub fn ordered_map<S, J, T>(
    pool: &rayon::ThreadPool,
    workers: usize,
    window: usize,
    sources: &[S],
    plan: impl FnMut(&S) -> J + Send,
    work: impl Fn(J) -> T + Sync,
    take: impl FnMut(T) -> Result<(), String>,
) -> Result<(), Stopped>
where
    S: Sync,
    J: Send,
    T: Send,
{
    let never = AtomicBool::new(false);
    ordered_map_until(&never, pool, workers, window, sources, plan, work, take)
}

/// [`ordered_map`] that winds down once `cancel` is set (by a Ctrl-C handler): nothing more is
/// planned or started, the jobs already running finish, and their results are handed to `take`
/// as far as they follow on from the last one handed back without a gap. Returns `Ok` then too:
/// the caller knows it cancelled.
#[allow(clippy::too_many_arguments)]
pub fn ordered_map_until<S, J, T>(
    cancel: &AtomicBool,
    pool: &rayon::ThreadPool,
    workers: usize,
    window: usize,
    sources: &[S],
    mut plan: impl FnMut(&S) -> J + Send,
    work: impl Fn(J) -> T + Sync,
    mut take: impl FnMut(T) -> Result<(), String>,
) -> Result<(), Stopped>
where
    S: Sync,
    J: Send,
    T: Send,
{
    let window = window.max(1);
    // (results handed back so far, stop): the planner's brake
    let handed = Mutex::new((0usize, false));
    let moved = Condvar::new();
    let stop = AtomicBool::new(false);
    let panicked = Mutex::new(None::<usize>);
    // Never more than `window` jobs in flight, so the planner never blocks on this channel.
    let (job_tx, job_rx) = mpsc::sync_channel::<(usize, J)>(window);
    let job_rx = Mutex::new(job_rx);
    let (res_tx, res_rx) = mpsc::channel::<(usize, T)>();
    std::thread::scope(|s| {
        let (handed, moved, stop, job_rx, work) = (&handed, &moved, &stop, &job_rx, &work);
        let panicked = &panicked;
        // Everyone stops: the planner at its next step, the workers at their next job.
        let halt = move || {
            stop.store(true, Ordering::Relaxed);
            handed.lock().unwrap_or_else(|e| e.into_inner()).1 = true;
            moved.notify_all();
        };
        // threads the machine refuses stop the run with that said, not with a panic
        let planner = std::thread::Builder::new().spawn_scoped(s, move || {
            for (i, src) in sources.iter().enumerate() {
                {
                    let mut g = handed.lock().unwrap_or_else(|e| e.into_inner());
                    while !g.1 && i >= g.0 + window {
                        g = moved.wait(g).unwrap_or_else(|e| e.into_inner());
                    }
                    if g.1 || cancel.load(Ordering::Relaxed) {
                        break;
                    }
                }
                if job_tx.send((i, plan(src))).is_err() {
                    break;
                }
            }
        });
        if let Err(e) = planner {
            return Err(Stopped::NoThread(e.to_string()));
        }
        let workers = std::thread::Builder::new().spawn_scoped(s, move || {
            pool.scope(|ps| {
                for _ in 0..workers.max(1) {
                    let res_tx = res_tx.clone();
                    ps.spawn(move |_| {
                        loop {
                            let next = job_rx.lock().unwrap_or_else(|e| e.into_inner()).recv();
                            let Ok((i, job)) = next else { break };
                            if stop.load(Ordering::Relaxed) || cancel.load(Ordering::Relaxed) {
                                break;
                            }
                            let done =
                                std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                                    work(job)
                                }));
                            let Ok(t) = done else {
                                panicked
                                    .lock()
                                    .unwrap_or_else(|e| e.into_inner())
                                    .get_or_insert(i);
                                halt();
                                break;
                            };
                            if res_tx.send((i, t)).is_err() {
                                break;
                            }
                        }
                    });
                }
            });
        });
        if let Err(e) = workers {
            // the planner sees the stop and ends; nothing was analysed
            halt();
            return Err(Stopped::NoThread(e.to_string()));
        }
        let mut pending = BTreeMap::new();
        let mut next = 0;
        let mut result = Ok(());
        'results: for (i, t) in res_rx.iter() {
            pending.insert(i, t);
            while let Some(t) = pending.remove(&next) {
                next += 1;
                result = take(t).map_err(Stopped::Take);
                if result.is_err() {
                    halt();
                    break 'results;
                }
                handed.lock().unwrap_or_else(|e| e.into_inner()).0 = next;
                moved.notify_all();
            }
        }
        // Workers see a closed channel (or the stop flag) and finish; the planner sees the stop
        // (it may be waiting for room in the window after a cancel that left a gap).
        halt();
        drop(res_rx);
        result?;
        match *panicked.lock().unwrap_or_else(|e| e.into_inner()) {
            Some(i) => Err(Stopped::Panicked(i)),
            None => Ok(()),
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::AtomicUsize;
    use std::time::Duration;

    fn pool(n: usize) -> rayon::ThreadPool {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .unwrap()
    }

    /// Results come back in order, whatever order the work finishes in, and the planner is never
    /// more than the window ahead of what was handed back.
    #[test]
    fn results_come_back_in_order_within_the_window() {
        let sources: Vec<usize> = (0..120).collect();
        let planned = AtomicUsize::new(0);
        let handed = AtomicUsize::new(0);
        let widest = AtomicUsize::new(0);
        let mut got = Vec::new();
        ordered_map(
            &pool(3),
            3,
            8,
            &sources,
            |&i| {
                let p = planned.fetch_add(1, Ordering::SeqCst) + 1;
                widest.fetch_max(p - handed.load(Ordering::SeqCst), Ordering::SeqCst);
                i
            },
            |i| {
                // later items often finish first
                std::thread::sleep(Duration::from_micros(((i * 7919) % 13) as u64 * 100));
                i * 10
            },
            |t| {
                got.push(t);
                handed.fetch_add(1, Ordering::SeqCst);
                Ok(())
            },
        )
        .unwrap();
        assert_eq!(got, (0..120).map(|i| i * 10).collect::<Vec<_>>());
        let w = widest.load(Ordering::SeqCst);
        assert!((1..=8).contains(&w), "planner ran {w} ahead");
    }

    /// The first error from the consumer stops the run and is returned; the planner stops within
    /// a window of it.
    #[test]
    fn an_error_stops_the_run() {
        let sources: Vec<usize> = (0..1000).collect();
        let planned = AtomicUsize::new(0);
        let mut seen = 0;
        let r = ordered_map(
            &pool(2),
            2,
            4,
            &sources,
            |&i| {
                planned.fetch_add(1, Ordering::SeqCst);
                i
            },
            |i| i,
            |t| {
                seen += 1;
                if t == 10 {
                    Err("disk full".into())
                } else {
                    Ok(())
                }
            },
        );
        assert_eq!(r, Err(Stopped::Take("disk full".to_string())));
        assert_eq!(seen, 11);
        assert!(planned.load(Ordering::SeqCst) <= 11 + 4);
    }

    /// A panic in the work stops the run cleanly (no hang) and names the source.
    #[test]
    fn a_panic_in_the_work_is_reported_not_hung() {
        let sources: Vec<usize> = (0..500).collect();
        let r = ordered_map(
            &pool(2),
            2,
            4,
            &sources,
            |&i| i,
            |i| {
                assert!(i != 37, "bug on 37");
                i
            },
            |_| Ok(()),
        );
        assert_eq!(r, Err(Stopped::Panicked(37)));
    }

    /// A cancel (Ctrl-C) mid-run: the run winds down without hanging, what was handed back is a
    /// gap-free prefix in order, and the planner stopped within a window of the cancel.
    #[test]
    fn a_cancel_winds_down_to_a_prefix_without_hanging() {
        for workers in [1, 3] {
            let sources: Vec<usize> = (0..10_000).collect();
            let cancel = AtomicBool::new(false);
            let planned = AtomicUsize::new(0);
            let mut got = Vec::new();
            let r = ordered_map_until(
                &cancel,
                &pool(workers),
                workers,
                8,
                &sources,
                |&i| {
                    planned.fetch_add(1, Ordering::SeqCst);
                    i
                },
                |i| {
                    std::thread::sleep(Duration::from_micros(((i * 7919) % 7) as u64 * 50));
                    i
                },
                |t| {
                    got.push(t);
                    if t == 20 {
                        cancel.store(true, Ordering::SeqCst);
                    }
                    Ok(())
                },
            );
            assert_eq!(r, Ok(()));
            assert!(got.len() > 20 && got.len() < 10_000, "{}", got.len());
            assert_eq!(got, (0..got.len()).collect::<Vec<_>>());
            assert!(planned.load(Ordering::SeqCst) <= 21 + 8 + workers);
        }
    }

    #[test]
    fn no_sources_is_fine() {
        let r = ordered_map(&pool(1), 1, 4, &[] as &[u8], |&x| x, |x| x, |_| Ok(()));
        assert_eq!(r, Ok(()));
    }
}
