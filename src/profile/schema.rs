//! The TOML schema of a profile file and its validation into a [`Profile`].

use super::Profile;
use crate::error::Result;

/// Parse and validate a profile from TOML text. `file` is the name used in error messages.
pub fn parse_profile(text: &str, file: &str) -> Result<Profile> {
    let _ = (text, file);
    todo!()
}
