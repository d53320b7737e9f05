//! What a row's content fingerprint stands for: the bytes that were analysed.
//!
//! The fingerprint is taken after the analysis, from the same files ([`capture::content_files`]:
//! a COMTRADE record's `.dat` too). Each file's identity (length, modification and change times,
//! inode) is noted before the analysis and again after the fingerprint; if any moved, the file was
//! replaced or written while it was read, and the row gets no fingerprint (`--resume` analyses it
//! again) and says so. Reading the files twice would also tell, at twice the reading.

use super::summary::Fingerprint;
use crate::capture;
use std::io::Read;
use std::path::Path;

/// What identifies a file's present content without reading it.
#[derive(Debug, Clone, PartialEq, Eq)]
struct Identity {
    len: u64,
    modified: Option<std::time::SystemTime>,
    #[cfg(unix)]
    unix: (u64, u64, i64, i64),
}

fn identity(path: &Path) -> Option<Identity> {
    let m = std::fs::metadata(path).ok()?;
    #[cfg(unix)]
    use std::os::unix::fs::MetadataExt;
    Some(Identity {
        len: m.len(),
        modified: m.modified().ok(),
        #[cfg(unix)]
        unix: (m.dev(), m.ino(), m.ctime(), m.ctime_nsec()),
    })
}

fn identities(path: &Path) -> Vec<(std::path::PathBuf, Option<Identity>)> {
    capture::content_files(path)
        .into_iter()
        .map(|p| {
            let id = identity(&p);
            (p, id)
        })
        .collect()
}

/// The content fingerprint of a capture: its file's bytes, then those of the files read with it.
pub fn fingerprint_capture(path: &Path) -> std::io::Result<String> {
    let mut fp = Fingerprint::default();
    let mut buf = vec![0u8; 64 * 1024];
    for p in capture::content_files(path) {
        let mut f = std::fs::File::open(p)?;
        loop {
            match f.read(&mut buf)? {
                0 => break,
                n => fp.update(&buf[..n]),
            }
        }
    }
    Ok(fp.finish())
}

/// The capture's files changed while they were read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Changed;

/// Runs `work` (which reads the capture at `path`) and gives its result with the fingerprint of
/// the bytes it read: `Err(Changed)` when the files changed in the meantime, an empty fingerprint
/// when they cannot be read afterwards (both never match a later run's, so the capture is
/// analysed again).
pub fn read_checked<T>(path: &Path, work: impl FnOnce() -> T) -> (T, Result<String, Changed>) {
    let before = identities(path);
    let done = work();
    let hash = fingerprint_capture(path).unwrap_or_default();
    if identities(path) == before {
        (done, Ok(hash))
    } else {
        (done, Err(Changed))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::batch::summary::fingerprint;

    #[test]
    fn the_fingerprint_is_of_the_bytes_the_work_read() {
        let dir = tempfile::TempDir::new().unwrap();
        let p = dir.path().join("a.csv");
        std::fs::write(&p, "v,i\n1,2\n").unwrap();
        let (read, hash) = read_checked(&p, || std::fs::read(&p).unwrap());
        assert_eq!(hash, Ok(fingerprint(&read)));
    }

    /// A capture replaced while it was analysed kept the new file's fingerprint beside the old
    /// file's result, so `--resume` kept a stale row.
    #[test]
    fn a_capture_replaced_or_rewritten_while_it_is_read_has_no_fingerprint() {
        let dir = tempfile::TempDir::new().unwrap();
        let p = dir.path().join("a.csv");
        std::fs::write(&p, "v,i\n1,2\n").unwrap();
        // replaced by another file (the way a logger or a copy tool swaps a file in)
        let (_, hash) = read_checked(&p, || {
            let tmp = dir.path().join("a.tmp");
            std::fs::write(&tmp, "v,i\n3,4\n").unwrap();
            std::fs::rename(&tmp, &p).unwrap();
        });
        assert_eq!(hash, Err(Changed));
        // written over in place, the same length (after a pause: the file system's clock may be
        // as coarse as a few milliseconds)
        std::thread::sleep(std::time::Duration::from_millis(30));
        let (_, hash) = read_checked(&p, || {
            std::fs::write(&p, "v,i\n5,6\n").unwrap();
        });
        assert_eq!(hash, Err(Changed));
    }

    #[test]
    fn a_comtrade_records_data_file_is_part_of_its_fingerprint() {
        let dir = tempfile::TempDir::new().unwrap();
        let cfg = dir.path().join("r.cfg");
        let dat = dir.path().join("r.dat");
        std::fs::write(&cfg, "cfg").unwrap();
        std::fs::write(&dat, "1,0,5\n").unwrap();
        let a = fingerprint_capture(&cfg).unwrap();
        std::fs::write(&dat, "1,0,6\n").unwrap();
        assert_ne!(fingerprint_capture(&cfg).unwrap(), a);
        assert_eq!(a, fingerprint(b"cfg1,0,5\n"));
    }
}
