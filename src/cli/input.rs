//! Reading what the user names: regular files only (a FIFO or a device
//! would block or never end), at most `MAX_CASE_BYTES`, and the case files
//! of a batch, with every file that is refused listed rather than dropped.

use hvstack::case::limits::MAX_CASE_BYTES;
use hvstack::case::text::printable;
use std::io::Read;
use std::path::{Path, PathBuf};

/// A path as shown in messages and reports: control characters escaped.
pub fn shown(path: &Path) -> String {
    printable(&path.display().to_string()).into_owned()
}

/// What a non-regular file is, in words.
fn kind(ft: std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if ft.is_fifo() {
            return "a FIFO (named pipe)";
        }
        if ft.is_char_device() {
            return "a character device";
        }
        if ft.is_block_device() {
            return "a block device";
        }
        if ft.is_socket() {
            return "a socket";
        }
    }
    if ft.is_dir() { "a folder" } else { "not a regular file" }
}

/// Opens `path` for reading without blocking on a FIFO (unix: O_NONBLOCK,
/// which regular files ignore).
fn open_nonblocking(path: &Path) -> std::io::Result<std::fs::File> {
    let mut options = std::fs::OpenOptions::new();
    options.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        options.custom_flags(libc::O_NONBLOCK);
    }
    options.open(path)
}

/// The bytes of a regular file of at most `MAX_CASE_BYTES`; `what` names
/// the file's role in messages ("case", "result").
pub fn read_regular(path: &Path, what: &str) -> Result<Vec<u8>, String> {
    let name = shown(path);
    let limit_mb = MAX_CASE_BYTES / (1024 * 1024);
    let meta = std::fs::metadata(path).map_err(|e| format!("{name}: cannot read the {what}: {e}"))?;
    if !meta.is_file() {
        return Err(format!("{name}: is {}; hvstack reads a {what} only from a regular file", kind(meta.file_type())));
    }
    let file = open_nonblocking(path).map_err(|e| format!("{name}: cannot read the {what}: {e}"))?;
    // what was opened may not be what was looked at a moment ago
    let meta = file.metadata().map_err(|e| format!("{name}: cannot read the {what}: {e}"))?;
    if !meta.is_file() {
        return Err(format!("{name}: is {}; hvstack reads a {what} only from a regular file", kind(meta.file_type())));
    }
    let too_big = |size: u64| {
        format!(
            "{name}: is {:.1} MiB, above the limit of {limit_mb} MiB for a {what} file; is this the right file?",
            size as f64 / (1024.0 * 1024.0)
        )
    };
    if meta.len() > MAX_CASE_BYTES {
        return Err(too_big(meta.len()));
    }
    let mut bytes = Vec::with_capacity(meta.len() as usize);
    file.take(MAX_CASE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| format!("{name}: cannot read the {what}: {e}"))?;
    if bytes.len() as u64 > MAX_CASE_BYTES {
        return Err(too_big(bytes.len() as u64));
    }
    Ok(bytes)
}

/// Identity of a file (device and inode on unix), to tell whether two
/// paths are the same file whatever links lead to them.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub struct FileId(u64, u64);

impl FileId {
    /// The identity of what `path` leads to, if it exists.
    pub fn of(path: &Path) -> Option<FileId> {
        std::fs::metadata(path).ok().map(|m| FileId::from_meta(&m))
    }

    /// The identity of a file from its metadata.
    pub fn from_meta(m: &std::fs::Metadata) -> FileId {
        #[cfg(unix)]
        {
            use std::os::unix::fs::MetadataExt;
            FileId(m.dev(), m.ino())
        }
        #[cfg(not(unix))]
        {
            let _ = m;
            FileId(0, 0)
        }
    }
}

/// One entry of a batch: a case file to check, or a file that looked like
/// a case (a .yaml/.yml name, or a walk error) but cannot be read as one.
#[derive(Debug, Clone)]
pub enum Entry {
    /// A case file and the name of its review subfolder.
    Case(PathBuf, String),
    /// Not checked, with the reason (a row with status 2 in the summary).
    Refused(PathBuf, String),
}

/// The cases of a batch: files as given, folders searched recursively for
/// *.yaml and *.yml in any letter case (following links to files and folders, loops
/// reported), sorted. Each case gets the name of its review subfolder: its
/// path below the folder given (or its stem) without the extension, made
/// safe and unique. A folder without any case is an error.
pub fn collect(paths: &[PathBuf]) -> Result<Vec<Entry>, String> {
    let mut out = Vec::new();
    let mut seen = std::collections::BTreeSet::new();
    let mut add = |out: &mut Vec<Entry>, f: PathBuf, key: String| {
        let key = safe_key(&key);
        let mut unique = key.clone();
        let mut n = 2;
        while !seen.insert(unique.to_lowercase()) {
            unique = format!("{key}-{n}");
            n += 1;
        }
        out.push(Entry::Case(f, unique));
    };
    let is_case_name = |p: &Path| {
        p.extension()
            .and_then(|e| e.to_str())
            .is_some_and(|e| e.eq_ignore_ascii_case("yaml") || e.eq_ignore_ascii_case("yml"))
    };
    for p in paths {
        if !p.is_dir() {
            let key = p.file_stem().map_or_else(|| "case".to_string(), |s| s.to_string_lossy().into_owned());
            add(&mut out, p.clone(), key);
            continue;
        }
        let mut found = Vec::new();
        let mut refused = Vec::new();
        for entry in walkdir::WalkDir::new(p).follow_links(true).sort_by_file_name() {
            match entry {
                Ok(e) if e.file_type().is_file() && is_case_name(e.path()) => found.push(e.into_path()),
                Ok(e) if !e.file_type().is_dir() && is_case_name(e.path()) => {
                    let why =
                        format!("is {}; not checked (cases are read from regular files only)", kind(e.file_type()));
                    refused.push((e.into_path(), why));
                }
                Ok(_) => {}
                Err(e) => {
                    let at = e.path().map(Path::to_path_buf).unwrap_or_else(|| p.clone());
                    // a dangling link that is not named like a case is not a case
                    let dangling = std::fs::symlink_metadata(&at).is_ok_and(|m| m.file_type().is_symlink());
                    if e.loop_ancestor().is_none() && dangling && !is_case_name(&at) {
                        continue;
                    }
                    let why = match e.loop_ancestor() {
                        Some(a) => format!("is a link back to {} (a loop); not followed", shown(a)),
                        None => format!(
                            "cannot be read: {}",
                            e.io_error().map_or_else(|| e.to_string(), |io| io.to_string())
                        ),
                    };
                    refused.push((at, why));
                }
            }
        }
        if found.is_empty() && refused.is_empty() {
            return Err(format!("{}: no case files (*.yaml, *.yml) in this folder", shown(p)));
        }
        found.sort();
        for f in found {
            let key = f.strip_prefix(p).unwrap_or(&f).with_extension("").to_string_lossy().replace('\\', "/");
            add(&mut out, f, key);
        }
        refused.sort();
        out.extend(refused.into_iter().map(|(f, why)| Entry::Refused(f, why)));
    }
    Ok(out)
}

/// A review subfolder path from a case's relative path: components that
/// are empty, start with '.' or hold control characters are made plain, so
/// the key cannot climb out of the review folder, hide, or clash with the
/// review marker.
fn safe_key(key: &str) -> String {
    let parts: Vec<String> = key
        .split('/')
        .filter(|c| !c.is_empty() && *c != ".")
        .map(|c| {
            let c: String = c.chars().map(|ch| if hvstack::case::text::forbidden(ch) { '_' } else { ch }).collect();
            match c.strip_prefix('.') {
                Some(rest) => format!("_{rest}"),
                None => c,
            }
        })
        .collect();
    if parts.is_empty() { "case".into() } else { parts.join("/") }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn review_keys_stay_inside_and_visible() {
        assert_eq!(safe_key("cable/two-layer"), "cable/two-layer");
        assert_eq!(safe_key("../up"), "_./up");
        assert_eq!(safe_key(".hvstack-review"), "_hvstack-review");
        assert_eq!(safe_key("a\u{1b}b"), "a_b");
        assert_eq!(safe_key(""), "case");
    }
}
