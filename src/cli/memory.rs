//! How the binary asks the operating system for memory.
//!
//! Transparent huge pages: the binary's allocator (mimalloc) asks Linux to back all of its
//! memory with 2 MiB pages (`madvise(MADV_HUGEPAGE)`), also where the system gives huge pages
//! only to programs that ask for them (`madvise` in
//! `/sys/kernel/mm/transparent_hugepage/enabled`, the default of several distributions). A run
//! of `sectio` is short, and most of its memory is touched for the first time by the first
//! drawing of each worker thread. On the project's test machine (a virtual machine whose memory
//! the host hands back and backs again as it is freed and used), a fresh 2 MiB page took
//! 2.3–3.8 ms per MiB to fault in when its memory had been idle for a few seconds, and a 4 KiB
//! page 0.55–0.85 ms per MiB. With a pause of 2 s before each run (as a user runs it),
//! `measure` with 4 KiB pages took 0.76, 0.78 and 0.96 times as long as with huge pages on the
//! benchmark's catalog, heavy and typical sets (median of paired runs), and in the benchmark's
//! rounds its ratio to the parse floor went from 1.87 to 1.34 (catalog) and 1.53 to 1.08
//! (heavy), round by round. Run back to back, when the memory a run gets was used by the run
//! before, huge pages were up to 10 % faster (fewer misses of the address translation cache).
//! So sectio leaves huge pages to the system's setting: it turns them off for itself unless the
//! system gives them to every program (`always`), or `MIMALLOC_ALLOW_THP` is set in the
//! environment (mimalloc's own switch, which then decides). Figures and commands:
//! docs/performance-log.md.

/// What [`leave_huge_pages_to_the_system`] did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HugePages {
    /// Turned off for this process.
    TurnedOff,
    /// Left as they were: the system gives them to every program, the environment chose, the
    /// system has none, or this is not Linux.
    LeftAlone,
}

/// The system-wide setting of transparent huge pages (Linux).
const THP_SETTING: &str = "/sys/kernel/mm/transparent_hugepage/enabled";

/// mimalloc's switch for huge pages (see the module doc).
const ALLOCATOR_SWITCH: &str = "MIMALLOC_ALLOW_THP";

/// Turn transparent huge pages off for this process unless the system gives them to every
/// program or the environment sets [`ALLOCATOR_SWITCH`] (see the module doc). Call it first
/// thing in `main`: memory already touched keeps its pages. Errors are ignored (the call
/// only tunes speed).
pub fn leave_huge_pages_to_the_system() -> HugePages {
    let setting = std::fs::read_to_string(THP_SETTING).ok();
    let chosen = std::env::var_os(ALLOCATOR_SWITCH).is_some();
    if !should_turn_off(setting.as_deref(), chosen) {
        return HugePages::LeftAlone;
    }
    turn_off()
}

/// Whether to turn huge pages off, given the contents of [`THP_SETTING`] (`None` when it
/// cannot be read: no huge pages, or not Linux) and whether the environment chose. The
/// setting lists the choices with the one in force in brackets: `always [madvise] never`.
fn should_turn_off(setting: Option<&str>, environment_chose: bool) -> bool {
    let in_force = setting.and_then(|s| {
        let open = s.find('[')?;
        let close = open + s[open..].find(']')?;
        Some(&s[open + 1..close])
    });
    !environment_chose && matches!(in_force, Some(mode) if mode != "always" && mode != "never")
}

#[cfg(target_os = "linux")]
fn turn_off() -> HugePages {
    // SAFETY: prctl(PR_SET_THP_DISABLE, 1, 0, 0, 0) only sets a flag of this process's memory
    // map (Linux 3.15 and later); it reads and writes no memory of ours.
    let done = unsafe { libc::prctl(libc::PR_SET_THP_DISABLE, 1, 0, 0, 0) } == 0;
    if done {
        HugePages::TurnedOff
    } else {
        HugePages::LeftAlone
    }
}

#[cfg(not(target_os = "linux"))]
fn turn_off() -> HugePages {
    HugePages::LeftAlone
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn huge_pages_go_off_only_where_the_system_leaves_them_to_programs_that_ask() {
        assert!(should_turn_off(Some("always [madvise] never\n"), false));
        assert!(!should_turn_off(Some("[always] madvise never\n"), false));
        assert!(!should_turn_off(Some("always madvise [never]\n"), false));
        // The environment's choice stands, whatever the system says.
        assert!(!should_turn_off(Some("always [madvise] never\n"), true));
        // No setting to read (no huge pages, not Linux), or one not understood.
        assert!(!should_turn_off(None, false));
        assert!(!should_turn_off(Some(""), false));
        assert!(!should_turn_off(Some("madvise"), false));
        assert!(!should_turn_off(Some("always [madvise"), false));
        // A setting this module does not know yet still means "only when asked".
        assert!(should_turn_off(Some("always [defer] madvise never"), false));
    }

    /// The call itself, in this test process (the flag only affects which pages the kernel
    /// uses for memory touched later; the other tests do not depend on it).
    #[cfg(target_os = "linux")]
    #[test]
    fn turning_huge_pages_off_shows_in_the_process_status() {
        assert_eq!(turn_off(), HugePages::TurnedOff);
        // SAFETY: PR_GET_THP_DISABLE reads the flag of this process; no memory is passed.
        let flag = unsafe { libc::prctl(libc::PR_GET_THP_DISABLE, 0, 0, 0, 0) };
        assert_eq!(flag, 1);
        let status = std::fs::read_to_string("/proc/self/status").expect("Linux has it");
        // "THP_enabled:\t0", on kernels that show the line.
        if let Some(line) = status.lines().find(|l| l.starts_with("THP_enabled:")) {
            assert_eq!(line.split_whitespace().nth(1), Some("0"), "{line}");
        }
    }
}
