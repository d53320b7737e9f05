//! Finding the captures of a batch: folders walked recursively in sorted order, files by
//! extension, an explicit list, and sharding.

use std::path::{Path, PathBuf};

/// Extensions taken as captures (the content still decides the format). A COMTRADE record is
/// its `.cfg` (the `.dat` beside it is read through the `.cfg`, never as a capture of its own)
/// or its single-file `.cff`.
pub const CAPTURE_EXTENSIONS: [&str; 6] = ["csv", "tsv", "txt", "wav", "cfg", "cff"];

/// A capture to analyse and the folder its settings are looked up from.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub struct Found {
    /// The capture.
    pub path: PathBuf,
    /// The batch root it was found under (sidecars from here down apply).
    pub root: PathBuf,
}

/// What the walk found.
#[derive(Debug, Default)]
pub struct Discovery {
    /// Captures, sorted by path.
    pub files: Vec<Found>,
    /// Files passed over (not a capture extension), counted.
    pub skipped: usize,
    /// Folders or entries that could not be read, with the reason.
    pub unreadable: Vec<(PathBuf, String)>,
    /// Lines to tell that are not errors: a link back into a folder already being searched.
    pub notes: Vec<String>,
}

fn is_capture(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| CAPTURE_EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
}

/// Walks `roots`: a folder is searched recursively (hidden files included), a file is taken as it
/// is (its own folder is its root).
///
/// Symbolic links are followed, to files and to folders. A link back to a folder the walk is
/// already inside (a loop) is not followed again, with a note. A link to nothing is an error
/// where its name is a capture's, and counted as skipped otherwise.
pub fn discover(roots: &[PathBuf]) -> Discovery {
    let mut d = Discovery::default();
    for root in roots {
        if root.is_dir() {
            let walk = walkdir::WalkDir::new(root)
                .follow_links(true)
                .sort_by_file_name();
            for entry in walk {
                match entry {
                    Ok(e) if e.file_type().is_file() => {
                        let p = e.path();
                        if is_capture(p) {
                            d.files.push(Found {
                                path: p.to_path_buf(),
                                root: root.clone(),
                            });
                        } else if p.file_name().and_then(|n| n.to_str())
                            != Some(super::sidecar::SIDECAR)
                        {
                            d.skipped += 1;
                        }
                    }
                    Ok(_) => {}
                    Err(e) => {
                        let p = e
                            .path()
                            .map(Path::to_path_buf)
                            .unwrap_or_else(|| root.clone());
                        if let Some(back) = e.loop_ancestor() {
                            d.notes.push(format!(
                                "{}: a link back to {}, which is being searched already: not \
                                 followed again",
                                p.display(),
                                back.display()
                            ));
                        } else if p.is_symlink() && !p.exists() {
                            if is_capture(&p) {
                                d.unreadable
                                    .push((p, "a link to something that does not exist".into()));
                            } else {
                                d.skipped += 1;
                            }
                        } else {
                            d.unreadable.push((p, e.to_string()));
                        }
                    }
                }
            }
        } else {
            // a file, or something that does not exist: it gets its own row either way
            let parent = root.parent().unwrap_or(Path::new("")).to_path_buf();
            d.files.push(Found {
                path: root.clone(),
                root: parent,
            });
        }
    }
    d.files.sort();
    d.files.dedup_by(|a, b| a.path == b.path);
    d
}

/// Keeps every `n`-th file starting at the `k`-th (1-based `k` of `n`), by position in the sorted
/// list, so `n` machines given `--shard 1/n` ... `--shard n/n` split a folder without overlap.
pub fn shard(files: Vec<Found>, k: usize, n: usize) -> Vec<Found> {
    files
        .into_iter()
        .enumerate()
        .filter(|(i, _)| i % n == k - 1)
        .map(|(_, f)| f)
        .collect()
}

/// Parses `K/N` with 1 ≤ K ≤ N.
pub fn parse_shard(text: &str) -> Result<(usize, usize), String> {
    let bad = || format!("--shard takes K/N with 1 <= K <= N, like 2/4, not '{text}'");
    let (k, n) = text.split_once('/').ok_or_else(bad)?;
    let (k, n): (usize, usize) = (
        k.trim().parse().map_err(|_| bad())?,
        n.trim().parse().map_err(|_| bad())?,
    );
    if k == 0 || n == 0 || k > n {
        return Err(bad());
    }
    Ok((k, n))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Links were skipped without a word: a linked capture or folder went missing from the
    /// summary.
    #[cfg(unix)]
    #[test]
    fn links_are_followed_and_a_loop_is_noted_once() {
        use std::os::unix::fs::symlink;
        let dir = tempfile::TempDir::new().unwrap();
        let site = dir.path().join("site");
        let other = dir.path().join("elsewhere");
        std::fs::create_dir_all(&site).unwrap();
        std::fs::create_dir_all(&other).unwrap();
        std::fs::write(site.join("a.csv"), "v,i\n").unwrap();
        std::fs::write(other.join("b.csv"), "v,i\n").unwrap();
        symlink(site.join("a.csv"), site.join("linked.csv")).unwrap();
        symlink(&other, site.join("more")).unwrap();
        symlink(&site, site.join("loop")).unwrap();
        symlink(site.join("gone"), site.join("gone.csv")).unwrap();
        symlink(site.join("gone"), site.join("gone.pdf")).unwrap();
        let d = discover(std::slice::from_ref(&site));
        let found: Vec<PathBuf> = d.files.iter().map(|f| f.path.clone()).collect();
        assert_eq!(
            found,
            vec![
                site.join("a.csv"),
                site.join("linked.csv"),
                site.join("more").join("b.csv")
            ]
        );
        assert_eq!(d.notes.len(), 1, "{:?}", d.notes);
        assert!(d.notes[0].contains("loop: a link back to"), "{:?}", d.notes);
        assert_eq!(d.unreadable.len(), 1, "{:?}", d.unreadable);
        assert_eq!(d.unreadable[0].0, site.join("gone.csv"));
        assert_eq!(d.skipped, 1);
    }

    #[test]
    fn shards_split_without_overlap_and_cover_everything() {
        let files: Vec<Found> = (0..10)
            .map(|i| Found {
                path: PathBuf::from(format!("f{i:02}.csv")),
                root: PathBuf::new(),
            })
            .collect();
        let mut all: Vec<Found> = (1..=3).flat_map(|k| shard(files.clone(), k, 3)).collect();
        assert_eq!(shard(files.clone(), 1, 3).len(), 4);
        all.sort();
        assert_eq!(all, files);
        assert_eq!(parse_shard("2/4"), Ok((2, 4)));
        assert!(parse_shard("0/4").is_err() && parse_shard("5/4").is_err());
        assert!(parse_shard("x").is_err());
    }

    #[test]
    fn folders_are_walked_in_sorted_order_and_other_files_counted() {
        let dir = tempfile::tempdir().unwrap();
        let sub = dir.path().join("b");
        std::fs::create_dir(&sub).unwrap();
        for p in [
            "z.csv",
            "a.WAV",
            "notes.pdf",
            "b/c.txt",
            "b/tracephase.toml",
            "r/fault.cfg",
            "r/fault.dat",
        ] {
            std::fs::create_dir_all(dir.path().join(p).parent().unwrap()).unwrap();
            std::fs::write(dir.path().join(p), "x").unwrap();
        }
        let d = discover(&[dir.path().to_path_buf()]);
        let names: Vec<String> = d
            .files
            .iter()
            .map(|f| {
                f.path
                    .strip_prefix(dir.path())
                    .unwrap()
                    .display()
                    .to_string()
            })
            .collect();
        assert_eq!(names, vec!["a.WAV", "b/c.txt", "r/fault.cfg", "z.csv"]);
        // notes.pdf and the record's .dat
        assert_eq!(d.skipped, 2);
    }
}
