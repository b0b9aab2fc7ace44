//! A standard output closed when the command starts (`noisewright … >&-`) is refused before
//! any work, exit 1: what the command writes there would reach no one, and "success" would
//! be a lie. A reader that closes a pipe part-way (`| head -c 10`) is another matter: that is
//! the reader having what it wants, a quiet end with exit 0 (common practice for programs
//! that write to a pipe; see `print_out` and `RenderReport::reader_closed`).
//!
//! The Rust runtime hides a closed descriptor: before `main` it opens `/dev/null` on each of
//! descriptors 0 to 2 that is closed (seen with rustc 1.95 on Linux: under `>&-`,
//! `/proc/self/fdinfo/1` of a Rust program shows `/dev/null` opened read-write), so every write
//! then succeeds. The check therefore runs before the runtime, as an ELF initialiser, and
//! records what it saw. Elsewhere than Linux no check is made.

use std::io;

use noisewright::{Error, Result};

#[cfg(target_os = "linux")]
mod probe {
    use std::sync::atomic::{AtomicBool, Ordering};

    /// Set before `main` when descriptor 1 was closed.
    static CLOSED: AtomicBool = AtomicBool::new(false);

    /// Runs from `.init_array`, before the Rust runtime opens `/dev/null` in its place.
    extern "C" fn look() {
        // SAFETY: fcntl(F_GETFD) only reads the descriptor's flags; on a closed descriptor it
        // fails with EBADF and changes nothing.
        let closed = unsafe { libc::fcntl(1, libc::F_GETFD) } == -1;
        CLOSED.store(closed, Ordering::Relaxed);
    }

    #[used]
    #[unsafe(link_section = ".init_array")]
    static LOOK: extern "C" fn() = look;

    pub(super) fn closed() -> bool {
        CLOSED.load(Ordering::Relaxed)
    }
}

#[cfg(not(target_os = "linux"))]
mod probe {
    pub(super) fn closed() -> bool {
        false
    }
}

/// Refuses a standard output that was closed when the command started (an I/O error, exit 1).
pub(super) fn refuse_if_closed_at_start() -> Result<()> {
    if probe::closed() {
        return Err(Error::io(
            "writing to standard output",
            io::Error::other(
                "it was closed when the command started, so nothing would receive what it \
                 writes; redirect it to a file, or to /dev/null to discard it",
            ),
        ));
    }
    Ok(())
}
