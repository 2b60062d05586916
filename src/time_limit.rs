//! A per-file time limit (`--time-limit SECONDS`, off by default): a file that takes longer
//! becomes an error row naming the limit and the step it was in, instead of holding up the
//! run.
//!
//! The limit is cooperative. [`run`] sets a deadline for the current thread and runs the
//! work; the long-running loops of each step (reading group codes, expanding blocks, reading
//! SVG elements, measuring each profile, the torsion solver's levels and iterations, the
//! extrusion figures) call [`check`], which reads the clock once every
//! [`CHECK_EVERY`] calls and, past the deadline, unwinds with a [`Exceeded`] payload that
//! [`run`] catches. Without a deadline [`check`] costs a thread-local read and a counter.
//! Nothing is left half-done: the unwinding drops the file's partial work, and each file is
//! measured on one thread from start to end.

use std::cell::Cell;
use std::panic::{catch_unwind, resume_unwind, AssertUnwindSafe};
use std::time::{Duration, Instant};

/// How many [`check`] calls pass between two readings of the clock.
pub const CHECK_EVERY: u32 = 256;

thread_local! {
    static DEADLINE: Cell<Option<Instant>> = const { Cell::new(None) };
    static COUNT: Cell<u32> = const { Cell::new(0) };
}

/// The limit was reached while in `step`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Exceeded {
    pub step: &'static str,
}

/// Run `work` with a deadline `limit` from now (none for `None`). `Err` when the deadline
/// passed during one of its [`check`]s; any other panic goes on unwinding. The previous
/// deadline of the thread is restored afterwards, so calls may nest (the inner limit only
/// shortens, never extends, the outer one).
pub fn run<R>(limit: Option<Duration>, work: impl FnOnce() -> R) -> Result<R, Exceeded> {
    let previous = DEADLINE.with(Cell::get);
    let deadline = match (limit.map(|l| Instant::now().checked_add(l)), previous) {
        (Some(Some(d)), Some(p)) => Some(d.min(p)),
        (Some(Some(d)), None) => Some(d),
        // No limit, or one too far away to represent: the outer one, if any.
        _ => previous,
    };
    DEADLINE.with(|d| d.set(deadline));
    COUNT.with(|c| c.set(0));
    let result = catch_unwind(AssertUnwindSafe(work));
    DEADLINE.with(|d| d.set(previous));
    match result {
        Ok(r) => Ok(r),
        Err(payload) => match payload.downcast::<Exceeded>() {
            Ok(e) => Err(*e),
            Err(other) => resume_unwind(other),
        },
    }
}

/// Unwind with [`Exceeded`] naming `step` when this thread's deadline has passed (looked at
/// once every [`CHECK_EVERY`] calls). Only to be called inside [`run`] or with no deadline
/// set, which is every thread that never called [`run`].
#[inline]
pub fn check(step: &'static str) {
    let Some(deadline) = DEADLINE.with(Cell::get) else {
        return;
    };
    let n = COUNT.with(|c| {
        let n = c.get().wrapping_add(1);
        c.set(n);
        n
    });
    if n.is_multiple_of(CHECK_EVERY) && Instant::now() >= deadline {
        std::panic::panic_any(Exceeded { step });
    }
}

/// [`check`] that reads the clock now: for steps that are long in themselves (a profile's
/// torsion level, its extrusion figures), called a few times each.
#[inline]
pub fn check_now(step: &'static str) {
    if let Some(deadline) = DEADLINE.with(Cell::get) {
        if Instant::now() >= deadline {
            std::panic::panic_any(Exceeded { step });
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn work_within_the_limit_returns_its_value() {
        assert_eq!(run(Some(Duration::from_secs(60)), || 42), Ok(42));
        assert_eq!(run(None, || 7), Ok(7));
    }

    #[test]
    fn a_loop_past_the_deadline_is_stopped_and_named() {
        let r = run(Some(Duration::from_millis(20)), || loop {
            check("spinning");
        });
        assert_eq!(r, Err(Exceeded { step: "spinning" }));
        // The deadline is gone afterwards.
        for _ in 0..10 * CHECK_EVERY {
            check("after");
        }
        check_now("after");
    }

    #[test]
    fn other_panics_go_on_unwinding() {
        let caught = catch_unwind(|| run(Some(Duration::from_secs(60)), || panic!("boom")));
        let payload = caught.expect_err("the panic passes through");
        assert_eq!(payload.downcast_ref::<&str>(), Some(&"boom"));
        // And the deadline was cleared on the way out.
        assert_eq!(DEADLINE.with(Cell::get), None);
    }

    #[test]
    fn an_inner_limit_never_extends_the_outer_one() {
        let r = run(Some(Duration::from_millis(10)), || {
            run(Some(Duration::from_secs(3600)), || loop {
                check_now("inner");
            })
        });
        // The inner run caught it: the outer deadline applied inside.
        assert_eq!(r, Ok(Err(Exceeded { step: "inner" })));
    }

    #[test]
    fn without_a_deadline_checks_do_nothing() {
        for _ in 0..10 * CHECK_EVERY {
            check("free");
        }
        check_now("free");
    }
}
