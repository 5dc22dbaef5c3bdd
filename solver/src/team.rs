//! Stepping teams: the threads that share one run's half steps by rows.
//!
//! A run's owner thread splits every half step's rows in blocks of equal
//! cost, one per member, and steps block 0 itself; each helper steps its
//! own block. The hand-over is by spinning on shared counters, not by a
//! fork-join pool's sleep and wake-up: a half step of a small grid (95 × 95
//! cells) lasts about 25 µs, and on the 2-vCPU virtual machine of
//! solver/benches/RESULTS.md a pool's join of two such blocks ran at 1.0–1.3×
//! one thread, where the same blocks handed over by spinning ran at 1.9–2.1×
//! (the cost of a hand-over there is 1–2 µs, a cache line's round trip
//! between the two vCPUs).
//!
//! # Protocol
//! The owner publishes a job — a closure of the block index, the member
//! count `k` of this job and the owner's floating-point mode — under a new
//! epoch, steps block 0, and spins until every helper with a slot below `k`
//! has reported that epoch done. A helper takes slot 1, 2, … when it
//! attaches, serves every job whose `k` exceeds its slot, and leaves when
//! the owner closes the team (after its last job, so no job is running).
//! The epoch and `k` are one atomic word, so a helper never pairs an old
//! epoch with a new count. The owner reads the helpers attached before each
//! job; one that attaches later joins from the next job on. Which thread
//! steps which rows never changes a bit: every entry is computed by the same
//! expression in the same floating-point mode.
//!
//! A job may also run in phases ([`Team::run_phases`]): every member steps
//! its block through phase after phase, meeting the others at a barrier
//! between two phases — each member marks the phase done on a cache line of
//! its own and waits until all have — so a run's stretch of steps between
//! two probe samples is one job, with one line's transfer per half step
//! instead of the owner's post and the helper's report.
//!
//! Spinning is bounded: after 4096 idle rounds a waiting thread yields
//! its core to the operating system at every round, so an oversubscribed
//! machine slows down instead of stalling.
use std::cell::Cell;
use std::panic::{catch_unwind, resume_unwind, AssertUnwindSafe};
use std::sync::atomic::{AtomicBool, AtomicPtr, AtomicU64, AtomicUsize, Ordering};
use std::sync::Mutex;

/// Most members of one team (the owner included). A grid's rows are split
/// in at most this many blocks; further threads take other runs.
pub const MAX_MEMBERS: usize = 16;

/// Idle rounds of a spinning thread (each a processor pause, tens of
/// nanoseconds) before it starts yielding to the operating system.
const SPINS: u32 = 1 << 12;

/// A value on a cache line of its own, so that one thread's counter is not
/// invalidated by another's.
#[repr(align(128))]
#[derive(Default)]
pub(crate) struct Line<T>(pub(crate) T);

/// The job a member runs: its block index.
type Job<'a> = &'a (dyn Fn(usize) + Sync);

/// The shared state of one run's stepping team.
pub struct Team {
    /// Helpers attached so far (members besides the owner).
    helpers: Line<AtomicUsize>,
    /// What the owner posts, on one cache line: a helper reads it all with
    /// one transfer.
    post: Line<Post>,
    /// The last epoch each slot has finished.
    done: [Line<AtomicU64>; MAX_MEMBERS],
    panicked: AtomicBool,
}

/// The owner's side of a [`Team`].
#[derive(Default)]
struct Post {
    /// The current job: epoch × 256 + its member count (the owner is its
    /// only writer, so it also counts the epochs).
    word: AtomicU64,
    /// The current job's closure, a `*const Job` on the owner's stack.
    job: AtomicPtr<()>,
    /// The owner's floating-point mode for the current job.
    mode: AtomicU64,
    closed: AtomicBool,
}

impl Default for Team {
    fn default() -> Team {
        Team::new()
    }
}

impl std::fmt::Debug for Team {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Team")
            .field("members", &self.members())
            .field("closed", &self.is_closed())
            .finish()
    }
}

thread_local! {
    /// Runs this thread is stepping as an owner, innermost last (a thread
    /// waiting inside a run's harmonic inversion may take another run).
    static OWNING: Cell<usize> = const { Cell::new(0) };
}

/// Whether this thread is inside a run's stepping as its owner: such a
/// thread must not serve a team (it would spin while its own run waits
/// beneath it).
pub(crate) fn owning() -> bool {
    OWNING.with(|c| c.get() > 0)
}

/// Marks this thread as a run's owner while alive.
pub(crate) struct Owning;

impl Owning {
    pub(crate) fn new() -> Owning {
        OWNING.with(|c| c.set(c.get() + 1));
        Owning
    }
}

impl Drop for Owning {
    fn drop(&mut self) {
        OWNING.with(|c| c.set(c.get() - 1));
    }
}

/// The pause of a waiting thread: [`SPINS`] processor pauses, then a yield
/// to the operating system at every round.
#[derive(Default)]
pub(crate) struct Backoff(u32);

impl Backoff {
    /// One idle round.
    #[inline]
    pub(crate) fn pause(&mut self) {
        if self.0 < SPINS {
            self.0 += 1;
            std::hint::spin_loop();
        } else {
            std::thread::yield_now();
        }
    }

    /// Back to spinning (work arrived).
    #[inline]
    pub(crate) fn reset(&mut self) {
        self.0 = 0;
    }
}

/// Waits for `ready`, spinning, then yielding to the operating system.
#[inline]
fn wait(mut ready: impl FnMut() -> bool) {
    let mut idle = Backoff::default();
    while !ready() {
        idle.pause();
    }
}

impl Team {
    /// A team of its owner alone, open.
    pub fn new() -> Team {
        Team {
            helpers: Line::default(),
            post: Line::default(),
            done: Default::default(),
            panicked: AtomicBool::new(false),
        }
    }

    /// Members a job started now would have (the owner and the helpers
    /// attached, at most [`MAX_MEMBERS`]).
    pub fn members(&self) -> usize {
        (1 + self.helpers.0.load(Ordering::Acquire)).min(MAX_MEMBERS)
    }

    /// Helpers attached so far.
    pub fn helpers(&self) -> usize {
        self.helpers.0.load(Ordering::Acquire)
    }

    /// Whether the owner has closed the team.
    pub fn is_closed(&self) -> bool {
        self.post.0.closed.load(Ordering::Acquire)
    }

    /// Closes the team: every helper leaves. Called by the owner after its
    /// last job.
    pub fn close(&self) {
        self.post.0.closed.store(true, Ordering::Release);
    }

    /// Runs `job(b)` for every block `b < k`: block 0 on this thread (the
    /// owner), the others on the helpers in slots 1..k, in this thread's
    /// floating-point mode, and returns when all are done. `k` must not
    /// exceed [`Team::members`] read by this owner.
    pub fn run(&self, k: usize, job: &(dyn Fn(usize) + Sync)) {
        assert!(
            (1..=self.members()).contains(&k),
            "{k} blocks for a team of {}",
            self.members()
        );
        if k == 1 {
            job(0);
            return;
        }
        let post = &self.post.0;
        let e = (post.word.load(Ordering::Relaxed) >> 8) + 1;
        let fat: Job = job;
        post.job
            .store(&fat as *const Job as *mut (), Ordering::Relaxed);
        post.mode
            .store(crate::fpu::current_mode(), Ordering::Relaxed);
        post.word.store(e << 8 | k as u64, Ordering::Release);
        let mine = catch_unwind(AssertUnwindSafe(|| job(0)));
        for slot in &self.done[1..k] {
            wait(|| slot.0.load(Ordering::Acquire) == e);
        }
        if let Err(p) = mine {
            resume_unwind(p);
        }
        if self.panicked.load(Ordering::Acquire) {
            panic!("a helper's block of the row-parallel step panicked");
        }
    }

    /// Runs `job(b, p)` for every block `b < k` and every phase `p <
    /// phases`, as one job of [`Team::run`]: each member steps its block
    /// through the phases in turn, and no member starts phase p + 1 before
    /// every member has finished phase p (a barrier between phases, with no
    /// hand-over through the owner). Every write of phase p is visible to
    /// every member in phase p + 1. A panic in any member's phase releases
    /// the others from the barrier and reaches the owner as in
    /// [`Team::run`].
    ///
    /// The barrier costs one cache line's transfer between the members
    /// where a job per phase costs two (the owner's post, then the helper's
    /// report) and the owner's setting up of the next job besides.
    pub fn run_phases(&self, k: usize, phases: usize, job: &(dyn Fn(usize, usize) + Sync)) {
        // Phases finished by each member, each on a line of its own.
        let at: [Line<AtomicUsize>; MAX_MEMBERS] = Default::default();
        let abort = AtomicBool::new(false);
        self.run(k, &|b| {
            for p in 0..phases {
                let r = catch_unwind(AssertUnwindSafe(|| job(b, p)));
                if let Err(e) = r {
                    abort.store(true, Ordering::Release);
                    resume_unwind(e);
                }
                at[b].0.store(p + 1, Ordering::Release);
                if p + 1 < phases {
                    wait(|| {
                        abort.load(Ordering::Acquire)
                            || at[..k].iter().all(|a| a.0.load(Ordering::Acquire) > p)
                    });
                }
                if abort.load(Ordering::Acquire) {
                    return;
                }
            }
        });
    }

    /// Attaches this thread as a helper and serves the owner's jobs until
    /// the team is closed. Returns at once when the team is full or closed,
    /// or when this thread is stepping a run as its owner (it would spin
    /// while its own run waits beneath it).
    pub fn serve(&self) {
        // A full team is not joined (its count of helpers then stays put
        // however often an idle thread comes back to it).
        if self.is_closed() || owning() || self.helpers() + 1 >= MAX_MEMBERS {
            return;
        }
        let slot = self.helpers.0.fetch_add(1, Ordering::AcqRel) + 1;
        if slot >= MAX_MEMBERS {
            return;
        }
        let mut seen = u64::MAX;
        let mut idle = Backoff::default();
        loop {
            let w = self.post.0.word.load(Ordering::Acquire);
            let e = w >> 8;
            if e != seen {
                seen = e;
                idle.reset();
                if slot < (w & 0xff) as usize {
                    // SAFETY: `job` points at the `Job` the owner stored
                    // before publishing epoch `e` (the Release store of
                    // `post.word`, read here with Acquire). The owner stays in
                    // `run`, keeping that reference and what it borrows
                    // alive, until this slot reports `e` done below.
                    let job = unsafe { *(self.post.0.job.load(Ordering::Relaxed) as *const Job) };
                    let mode = self.post.0.mode.load(Ordering::Relaxed);
                    let r = catch_unwind(AssertUnwindSafe(|| {
                        crate::fpu::with_mode(mode, || job(slot))
                    }));
                    if r.is_err() {
                        self.panicked.store(true, Ordering::Release);
                    }
                    self.done[slot].0.store(e, Ordering::Release);
                }
            } else if self.is_closed() {
                return;
            } else {
                idle.pause();
            }
        }
    }
}

/// Runs `f` with a team whose helpers are this rayon pool's other threads
/// (when `parallel` and the pool has more than one), closing it when `f`
/// returns. Every thread of the pool takes part ([`rayon::broadcast`]): the
/// first runs `f`, the others serve its team until it closes.
pub fn with_team<R: Send>(parallel: bool, f: impl FnOnce(Option<&Team>) -> R + Send) -> R {
    if !parallel || rayon::current_num_threads() < 2 || owning() {
        return f(None);
    }
    let team = Team::new();
    let owner = Mutex::new(Some(f));
    let out = Mutex::new(None);
    rayon::broadcast(|_| {
        let f = owner.lock().unwrap_or_else(|e| e.into_inner()).take();
        match f {
            Some(f) => {
                let r = catch_unwind(AssertUnwindSafe(|| f(Some(&team))));
                team.close();
                *out.lock().unwrap_or_else(|e| e.into_inner()) = Some(r);
            }
            None => team.serve(),
        }
    });
    match out
        .into_inner()
        .unwrap_or_else(|e| e.into_inner())
        .expect("the owner ran")
    {
        Ok(r) => r,
        Err(p) => resume_unwind(p),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_block_runs_once_per_job_on_any_team() {
        for threads in [1, 2, 3] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            let counts: Vec<AtomicUsize> = (0..4).map(|_| AtomicUsize::new(0)).collect();
            let jobs = pool.install(|| {
                with_team(true, |team| {
                    let mut jobs = 0;
                    for _ in 0..2000 {
                        let k = team.map_or(1, |t| t.members()).min(4);
                        let run = |b: usize| {
                            counts[b].fetch_add(1, Ordering::Relaxed);
                        };
                        match team {
                            Some(t) => t.run(k, &run),
                            None => run(0),
                        }
                        jobs += 1;
                        for (b, c) in counts.iter().enumerate() {
                            let n = c.swap(0, Ordering::Relaxed);
                            assert_eq!(n, usize::from(b < k), "block {b} of {k}");
                        }
                    }
                    jobs
                })
            });
            assert_eq!(jobs, 2000);
        }
    }

    #[test]
    fn no_member_starts_a_phase_before_all_have_finished_the_last() {
        for threads in [1, 2, 3] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            pool.install(|| {
                with_team(true, |team| {
                    if let Some(t) = team {
                        wait(|| t.members() == threads);
                    }
                    let k = team.map_or(1, |t| t.members());
                    // In phase p each member writes its own slot of buffer
                    // p mod 2 and reads every slot of the other buffer,
                    // written in phase p − 1: each must hold p − 1 (the
                    // barrier orders the phases; the two buffers keep the
                    // writes of phase p away from the reads of phase p).
                    let slots: [Vec<AtomicUsize>; 2] =
                        std::array::from_fn(|_| (0..k).map(|_| AtomicUsize::new(0)).collect());
                    let runs: Vec<AtomicUsize> = (0..k).map(|_| AtomicUsize::new(0)).collect();
                    let phases = 3000;
                    let job = |b: usize, p: usize| {
                        if p > 0 {
                            for s in &slots[(p - 1) % 2] {
                                assert_eq!(
                                    s.load(Ordering::Relaxed),
                                    p - 1,
                                    "phase {p}, block {b}"
                                );
                            }
                        }
                        runs[b].fetch_add(1, Ordering::Relaxed);
                        slots[p % 2][b].store(p, Ordering::Relaxed);
                    };
                    match team {
                        Some(t) => t.run_phases(k, phases, &job),
                        None => (0..phases).for_each(|p| job(0, p)),
                    }
                    for r in &runs {
                        assert_eq!(r.load(Ordering::Relaxed), phases);
                    }
                })
            });
        }
    }

    /// Runs `f` with a team of two whose helper has attached, and returns
    /// whether it panicked (the panic having reached the owner).
    fn panics_on_a_team_of_two(f: impl Fn(&Team) + Send + Sync) -> bool {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(2)
            .build()
            .unwrap();
        catch_unwind(AssertUnwindSafe(|| {
            pool.install(|| {
                with_team(true, |team| {
                    let t = team.expect("a team on two threads");
                    wait(|| t.members() == 2);
                    f(t);
                })
            })
        }))
        .is_err()
    }

    #[test]
    fn a_panic_in_a_phase_releases_the_others_and_reaches_the_owner() {
        assert!(panics_on_a_team_of_two(|t| t.run_phases(2, 10, &|b, p| {
            assert!(b == 0 || p < 5, "a deliberate failure")
        })));
    }

    #[test]
    fn a_helpers_panic_reaches_the_owner() {
        assert!(panics_on_a_team_of_two(
            |t| t.run(2, &|b| { assert_eq!(b, 0, "a deliberate failure") })
        ));
    }
}
