//! Writing results: every file goes to a temporary name in the same folder and is renamed
//! into place when complete, so an interrupted run never leaves a truncated file.

use crate::{CliError, Result};
use std::io::{BufWriter, Write};
use std::path::Path;

/// Writes a file atomically: `fill` writes into a buffered temporary file, which is then
/// flushed, synced and renamed to `path`. On any error the temporary file is removed.
///
/// # Errors
/// I/O errors, with the path in the message.
pub fn write_atomic(path: &Path, fill: impl FnOnce(&mut dyn Write) -> std::io::Result<()>) -> Result<()> {
    let dir = path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let name = path.file_name().ok_or_else(|| {
        CliError::io(
            format!("'{}' is not a file path", path.display()),
            std::io::Error::from(std::io::ErrorKind::InvalidInput),
        )
    })?;
    let tmp = dir.join(format!(".{}.{}.tmp", name.to_string_lossy(), std::process::id()));
    let result = (|| -> std::io::Result<()> {
        let f = std::fs::File::create(&tmp)?;
        let mut w = BufWriter::new(f);
        fill(&mut w)?;
        w.flush()?;
        w.get_ref().sync_all()?;
        Ok(())
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(CliError::io(format!("cannot write '{}'", path.display()), e));
    }
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        CliError::io(format!("cannot move the finished file into place at '{}'", path.display()), e)
    })
}
