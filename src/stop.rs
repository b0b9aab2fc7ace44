//! Stopping long computations: the caller's flag (set by a signal handler, say), polled at
//! bounded intervals by the design, the loop buffer, the bursts' catch-up and each channel,
//! so that a stop request is seen within a fraction of a second however large the profile.

use std::sync::atomic::{AtomicBool, Ordering};

use crate::error::{Error, Result};

/// A flag a long computation polls; once it is set the computation ends with
/// [`Error::Interrupted`]. `Stop::default()` never stops.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Stop<'a>(Option<&'a AtomicBool>);

impl<'a> Stop<'a> {
    /// Stops when `flag` becomes true.
    pub(crate) fn on(flag: &'a AtomicBool) -> Stop<'a> {
        Stop(Some(flag))
    }

    /// [`Error::Interrupted`] once the flag is set.
    pub(crate) fn check(self) -> Result<()> {
        match self.0 {
            Some(flag) if flag.load(Ordering::Relaxed) => Err(Error::Interrupted),
            _ => Ok(()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_stop_reports_the_flag_and_the_default_never_stops() {
        let flag = AtomicBool::new(false);
        assert!(Stop::on(&flag).check().is_ok());
        flag.store(true, Ordering::Relaxed);
        assert!(matches!(Stop::on(&flag).check(), Err(Error::Interrupted)));
        assert!(Stop::default().check().is_ok());
    }
}
