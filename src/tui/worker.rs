//! Slow work away from the keys. The screen hands its solves (nominal, worst case, checks) and
//! its capacitance trends to one background thread and goes on answering keys; the answers come
//! back as messages that the update applies when they arrive. A newer request makes an older one
//! of the same kind moot: the thread skips a moot request, and stops a moot solve between its
//! stages, rather than finish work nobody will see.

use super::app::{Solved, solve_for_screen_while};
use crate::diagnose::judge;
pub use crate::diagnose::judge::Judgement;
use crate::diagnose::trend::{Trend, trend};
use crate::supply::Supply;
use std::sync::Arc;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::mpsc::{self, Receiver, RecvTimeoutError, Sender, TryRecvError};
use std::time::Duration;

/// What the screen asks for.
#[derive(Debug, Clone)]
pub enum Job {
    /// Everything the results panel, the sketch and the caution line show.
    Solve(Supply),
    /// The capacitance the visits imply, and its drift; each visit's readings against their
    /// windows.
    Trend(Supply),
}

impl Job {
    fn kind(&self) -> usize {
        match self {
            Job::Solve(_) => 0,
            Job::Trend(_) => 1,
        }
    }
}

/// An answer, with the supply it was worked out for, so that the screen can tell whether it
/// still applies.
#[derive(Debug)]
pub enum Done {
    Solved(Supply, Box<Result<Solved, String>>),
    Trend(Supply, Trend, Vec<Judgement>),
    /// A request made moot by a newer one of its kind before it finished.
    Dropped,
}

/// One background thread and the channels to it.
pub struct Worker {
    jobs: Sender<(u64, Job)>,
    done: Receiver<Done>,
    /// The newest request of each kind; the thread drops older ones.
    latest: Arc<[AtomicU64; 2]>,
    next: u64,
    /// Requests sent whose answer (or drop) has not been received yet.
    outstanding: usize,
}

impl Worker {
    /// Starts the thread. It ends by itself when the worker is dropped (its channel closes).
    pub fn start() -> Worker {
        let (jobs, inbox) = mpsc::channel::<(u64, Job)>();
        let (outbox, done) = mpsc::channel();
        let latest: Arc<[AtomicU64; 2]> = Arc::new([AtomicU64::new(0), AtomicU64::new(0)]);
        let seen = Arc::clone(&latest);
        std::thread::Builder::new()
            .name("railcheck-worker".into())
            .spawn(move || {
                for (id, job) in inbox {
                    let newest = &seen[job.kind()];
                    let moot = || newest.load(Ordering::Acquire) != id;
                    let answer = if moot() {
                        Done::Dropped
                    } else {
                        match job {
                            Job::Solve(s) => match solve_for_screen_while(&s, &|| !moot()) {
                                Some(r) => Done::Solved(s, Box::new(r)),
                                None => Done::Dropped,
                            },
                            Job::Trend(s) => {
                                let t = trend(&s);
                                match judge_visits(&s, &|| !moot()) {
                                    Some(j) => Done::Trend(s, t, j),
                                    None => Done::Dropped,
                                }
                            }
                        }
                    };
                    if outbox.send(answer).is_err() {
                        return;
                    }
                }
            })
            .expect("the screen's worker thread starts");
        Worker {
            jobs,
            done,
            latest,
            next: 0,
            outstanding: 0,
        }
    }

    /// Sends `job`; any older request of its kind becomes moot.
    pub fn submit(&mut self, job: Job) {
        self.next += 1;
        self.latest[job.kind()].store(self.next, Ordering::Release);
        if self.jobs.send((self.next, job)).is_ok() {
            self.outstanding += 1;
        }
    }

    /// Whether answers are still to come.
    pub fn busy(&self) -> bool {
        self.outstanding > 0
    }

    /// The next answer: one already there (`wait` zero), one within `wait`, or, with no
    /// `wait`, whenever it comes. None when nothing is outstanding or the wait ran out.
    pub fn receive(&mut self, wait: Option<Duration>) -> Option<Done> {
        if self.outstanding == 0 {
            return None;
        }
        let got = match wait {
            None => self.done.recv().ok(),
            Some(d) if d.is_zero() => match self.done.try_recv() {
                Ok(x) => Some(x),
                Err(TryRecvError::Empty) => None,
                Err(TryRecvError::Disconnected) => {
                    self.outstanding = 0;
                    None
                }
            },
            Some(d) => match self.done.recv_timeout(d) {
                Ok(x) => Some(x),
                Err(RecvTimeoutError::Timeout) => None,
                Err(RecvTimeoutError::Disconnected) => {
                    // The thread is gone (it panicked): nothing more will come.
                    self.outstanding = 0;
                    None
                }
            },
        };
        match got {
            Some(x) => {
                self.outstanding -= 1;
                Some(x)
            }
            None => {
                if wait.is_none() {
                    self.outstanding = 0;
                }
                None
            }
        }
    }
}

/// How many visits, newest first, are judged against their windows: each is a diagnosis
/// (about 40 ms in a release build), and a screen shows a handful at a time; a long history's
/// older visits show their readings and any verdict they kept.
pub const JUDGED_VISITS: usize = 12;

/// Judges the newest [`JUDGED_VISITS`] visits of `supply` (in the order of its visits),
/// asking `keep_going` between visits; None when it says no. Visits with the same readings
/// share one diagnosis. The judging itself is the core's, the same `railcheck log` uses.
pub fn judge_visits(supply: &Supply, keep_going: &dyn Fn() -> bool) -> Option<Vec<Judgement>> {
    judge::judge_visits(supply, JUDGED_VISITS, keep_going)
}
