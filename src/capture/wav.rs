//! WAV loader (being written).
use super::{Capture, LoadError, LoadErrorKind, LoadOptions};
use std::path::Path;

pub(crate) fn load(path: &Path, _opts: &LoadOptions) -> Result<Capture, LoadError> {
    Err(LoadError::new(path, None, LoadErrorKind::UnsupportedWav("not yet".into())))
}
