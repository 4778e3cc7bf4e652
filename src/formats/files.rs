//! Reading and writing the files the tool is given, with the limits every untrusted path needs:
//! inputs must be regular files of bounded size (so `/dev/zero` or a FIFO cannot make a read run
//! without end), and outputs are written atomically (a temporary file in the same directory,
//! then a rename) and never over one of the command's own inputs.

use std::io::{Read, Write};
use std::path::{Path, PathBuf};

use crate::error::{Error, IoOp, Result};

/// Largest input file read (64 MiB): far above any game, strategy, correlations, protocol or
/// certificate file the tool can process.
pub const MAX_INPUT_BYTES: u64 = 64 << 20;

fn io(path: &Path, op: IoOp, source: std::io::Error) -> Error {
    Error::Io {
        path: path.to_string_lossy().into_owned(),
        op,
        source,
    }
}

fn refused(path: &Path, message: String) -> Error {
    Error::Input {
        location: crate::error::Location {
            file: path.to_string_lossy().into_owned(),
            ..Default::default()
        },
        message,
    }
}

/// Reads a UTF-8 text file of at most [`MAX_INPUT_BYTES`]. Errors never quote the content.
pub fn read_text(path: impl AsRef<Path>) -> Result<String> {
    let path = path.as_ref();
    let meta = std::fs::metadata(path).map_err(|e| io(path, IoOp::Read, e))?;
    if !meta.is_file() {
        return Err(refused(
            path,
            "not a regular file (devices, pipes and directories are not read)".into(),
        ));
    }
    if meta.len() > MAX_INPUT_BYTES {
        return Err(refused(
            path,
            format!(
                "the file has {} bytes, above the limit of {MAX_INPUT_BYTES}",
                meta.len()
            ),
        ));
    }
    let file = std::fs::File::open(path).map_err(|e| io(path, IoOp::Read, e))?;
    let mut bytes = Vec::new();
    // The limit holds even if the file grows while it is read.
    file.take(MAX_INPUT_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| io(path, IoOp::Read, e))?;
    if bytes.len() as u64 > MAX_INPUT_BYTES {
        return Err(refused(
            path,
            format!("the file is larger than the limit of {MAX_INPUT_BYTES} bytes"),
        ));
    }
    String::from_utf8(bytes).map_err(|e| {
        refused(
            path,
            format!(
                "not a UTF-8 text file (invalid byte at offset {})",
                e.utf8_error().valid_up_to()
            ),
        )
    })
}

/// Whether two paths name the same existing file (after resolving links).
fn same_file(a: &Path, b: &Path) -> bool {
    match (std::fs::canonicalize(a), std::fs::canonicalize(b)) {
        (Ok(x), Ok(y)) => x == y,
        _ => false,
    }
}

/// Writes `text` to `path` atomically, refusing to replace any of `inputs` (the files the
/// command read). The text goes to a temporary file beside `path`, is flushed, then renamed
/// over it, so a reader never sees half a file and a failed write leaves the old one intact.
pub fn write_atomic(path: impl AsRef<Path>, text: &str, inputs: &[&Path]) -> Result<()> {
    let path = path.as_ref();
    if let Some(input) = inputs.iter().find(|i| same_file(path, i)) {
        return Err(Error::InvalidArgument(format!(
            "refusing to write {}: it is an input of this command ({})",
            path.to_string_lossy(),
            input.to_string_lossy()
        )));
    }
    if path.is_dir() {
        return Err(Error::InvalidArgument(format!(
            "cannot write {}: it is a directory",
            path.to_string_lossy()
        )));
    }
    match std::fs::symlink_metadata(path) {
        // Renaming over a symbolic link would replace the link, not what it points to; writing
        // through it would change a file the user did not name. Neither silently.
        Ok(m) if m.file_type().is_symlink() => {
            return Err(Error::InvalidArgument(format!(
                "refusing to write {}: it is a symbolic link (name the file it points to instead)",
                path.to_string_lossy()
            )));
        }
        // A device, FIFO or socket (a terminal, /dev/null, a pipe): written in place, as the
        // shell's `>` would, never replaced by a regular file.
        Ok(m) if !m.file_type().is_file() => {
            return std::fs::OpenOptions::new()
                .write(true)
                .open(path)
                .and_then(|mut f| f.write_all(text.as_bytes()))
                .map_err(|e| io(path, IoOp::Write, e));
        }
        _ => {}
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    let temp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        // `create_new`: never through a link or file planted at the temporary name.
        let mut f = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&temp)?;
        f.write_all(text.as_bytes())?;
        f.sync_all()?;
        std::fs::rename(&temp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&temp);
        return Err(io(path, IoOp::Write, e));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_devices_and_inputs() {
        assert!(matches!(read_text("/dev/zero"), Err(Error::Input { .. })));
        let dir = std::env::temp_dir().join(format!("bellgap-files-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let input = dir.join("in.yaml");
        std::fs::write(&input, "x: 1\n").unwrap();
        let err = write_atomic(&input, "replaced", &[input.as_path()]).unwrap_err();
        assert!(err.to_string().contains("refusing"), "{err}");
        assert_eq!(read_text(&input).unwrap(), "x: 1\n");
        let out = dir.join("out.txt");
        write_atomic(&out, "hello", &[input.as_path()]).unwrap();
        assert_eq!(read_text(&out).unwrap(), "hello");
        let missing = dir.join("no/such/dir/x.svg");
        let err = write_atomic(&missing, "x", &[]).unwrap_err();
        assert!(err.to_string().starts_with("cannot write"), "{err}");
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[cfg(unix)]
    #[test]
    fn devices_are_written_in_place_and_symlinks_refused() {
        // `--svg /dev/null` run as root once replaced the system's /dev/null with a regular
        // file (temporary file renamed over it).
        write_atomic("/dev/null", "discarded", &[]).unwrap();
        let meta = std::fs::metadata("/dev/null").unwrap();
        assert!(!meta.file_type().is_file(), "/dev/null is still a device");
        let dir = std::env::temp_dir().join(format!("bellgap-links-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let target = dir.join("target.txt");
        std::fs::write(&target, "keep").unwrap();
        let link = dir.join("link.txt");
        std::os::unix::fs::symlink(&target, &link).unwrap();
        let err = write_atomic(&link, "replaced", &[]).unwrap_err();
        assert!(err.to_string().contains("symbolic link"), "{err}");
        assert_eq!(read_text(&target).unwrap(), "keep");
        assert!(std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
