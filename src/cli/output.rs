//! Writing outputs without losing anything of the user's.
//!
//! * Review folders are built in a hidden staging folder beside the
//!   destination and swapped in whole. A folder is replaced only while it
//!   holds exactly what hvstack wrote there: its marker file lists every
//!   file with its SHA-256, and the folder is checked against that list when
//!   the run starts and again at the swap (after moving it aside, so
//!   nothing can slip in between). A file the list does not name, a file
//!   changed since, a link, or one of this run's inputs refuses the swap and
//!   puts the folder back as it was.
//! * The JUnit report replaces only a file hvstack wrote (or an empty one),
//!   never an input; a link is followed and the file it leads to replaced
//!   atomically (the link stays a link); a pipe or device (`/dev/stdout`)
//!   is written through.
//! * Every write holds the output lock of `signals`, so an interrupt waits
//!   for it and then reports truthfully.

use super::input::{FileId, shown};
use super::signals::outputs;
use hvstack::review::ReviewFile;
use std::collections::BTreeMap;
use std::io::Write;
use std::path::{Path, PathBuf};

/// The marker file of a review folder: a header and one line per file
/// hvstack wrote (`SHA-256  path`, as `sha256sum` prints).
pub const REVIEW_MARKER: &str = ".hvstack-review";
const MARKER_HEADER: &str = "# Written by hvstack check --report. hvstack replaces this folder on a later run only \
                             while it holds exactly the files listed here, unchanged (SHA-256, path).\n";
/// Largest marker file read.
const MAX_MARKER_BYTES: u64 = 16 * 1024 * 1024;

/// Relative path ('/'-separated) → SHA-256 (hex) of the files hvstack wrote.
type Manifest = BTreeMap<String, String>;

fn sha256_file(path: &Path) -> std::io::Result<String> {
    use sha2::{Digest, Sha256};
    use std::io::Read;
    let mut hasher = Sha256::new();
    let mut file = std::fs::File::open(path)?;
    let mut buf = vec![0u8; 1 << 16];
    loop {
        let n = file.read(&mut buf)?;
        if n == 0 {
            break;
        }
        hasher.update(&buf[..n]);
    }
    Ok(hasher.finalize().iter().map(|b| format!("{b:02x}")).collect())
}

fn manifest_text(m: &Manifest) -> String {
    let mut s = MARKER_HEADER.to_string();
    for (path, sha) in m {
        s.push_str(&format!("{sha}  {path}\n"));
    }
    s
}

/// The manifest of a marker file, `None` when it is not one of ours (or
/// from a version that wrote no list).
fn parse_manifest(text: &str) -> Option<Manifest> {
    let body = text.strip_prefix(MARKER_HEADER)?;
    let mut m = Manifest::new();
    for line in body.lines() {
        let (sha, path) = line.split_once("  ")?;
        if sha.len() != 64 || !sha.bytes().all(|b| b.is_ascii_hexdigit()) {
            return None;
        }
        m.insert(path.to_string(), sha.to_string());
    }
    Some(m)
}

/// Why the folder at `dir` may not be replaced by a review, if it may not:
/// it is a link or not a folder, or it is not empty and holds anything its
/// marker does not list unchanged, or it holds one of `inputs`. `Ok` when
/// it does not exist, is empty, or holds only what hvstack wrote.
fn refusal(dir: &Path, inputs: &[FileId]) -> Result<(), String> {
    let meta = match std::fs::symlink_metadata(dir) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(format!("cannot be examined: {e}")),
        Ok(m) => m,
    };
    if meta.file_type().is_symlink() {
        return Err("is a symbolic link; name the folder itself".into());
    }
    if !meta.is_dir() {
        return Err("exists and is not a folder".into());
    }
    let mut entries = std::fs::read_dir(dir).map_err(|e| format!("cannot be examined: {e}"))?;
    if entries.next().is_none() {
        return Ok(());
    }
    let marker = dir.join(REVIEW_MARKER);
    let text = match std::fs::symlink_metadata(&marker) {
        Ok(m) if m.is_file() && m.len() <= MAX_MARKER_BYTES => std::fs::read_to_string(&marker).unwrap_or_default(),
        _ => {
            return Err("exists and is not an hvstack review folder; name a new or empty folder (a review folder is \
                        replaced whole on every run)"
                .into());
        }
    };
    let Some(manifest) = parse_manifest(&text) else {
        return Err("has a review marker without a list of files (an earlier version of hvstack, or edited), so \
                    hvstack cannot tell its files from yours; remove the folder yourself or name a new one"
            .into());
    };
    let directories: std::collections::BTreeSet<String> =
        manifest.keys().flat_map(|p| p.match_indices('/').map(move |(i, _)| p[..i].to_string())).collect();
    for entry in walkdir::WalkDir::new(dir).min_depth(1).sort_by_file_name() {
        let entry = entry.map_err(|e| format!("cannot be examined: {e}"))?;
        let rel = entry.path().strip_prefix(dir).unwrap_or(entry.path()).to_string_lossy().replace('\\', "/");
        let ft = entry.file_type();
        let show = hvstack::case::text::printable(&rel).into_owned();
        if ft.is_dir() {
            if !directories.contains(&rel) {
                return Err(format!("holds the folder {show}, which hvstack did not make; move it out first"));
            }
            continue;
        }
        if !ft.is_file() {
            return Err(format!("holds {show}, which is not a file hvstack wrote (a link or special file)"));
        }
        if rel == REVIEW_MARKER {
            continue;
        }
        let meta = entry.metadata().map_err(|e| format!("cannot be examined: {e}"))?;
        if inputs.contains(&FileId::from_meta(&meta)) {
            return Err(format!("holds {show}, an input of this run; keep inputs outside the review folder"));
        }
        let Some(expected) = manifest.get(&rel) else {
            return Err(format!("holds {show}, which hvstack did not write; move it out first"));
        };
        let actual = sha256_file(entry.path()).map_err(|e| format!("cannot read {show}: {e}"))?;
        if &actual != expected {
            return Err(format!("holds {show}, changed since hvstack wrote it; move it out first"));
        }
    }
    Ok(())
}

/// A path made absolute without resolving links in its last component.
fn absolute(path: &Path) -> Result<PathBuf, String> {
    let abs = std::path::absolute(path).map_err(|e| format!("{}: {e}", shown(path)))?;
    // `.` and `..` as the last component have no name to swap under
    if abs.file_name().is_none() || path.ends_with("..") || path.ends_with(".") {
        return std::fs::canonicalize(path).map_err(|e| format!("{}: {e}", shown(path)));
    }
    Ok(abs)
}

/// `path` with links resolved as far as it exists: the whole path when it
/// exists, else its parent resolved and its name joined.
fn resolved(path: &Path) -> PathBuf {
    if let Ok(real) = std::fs::canonicalize(path) {
        return real;
    }
    match (path.parent().and_then(|p| std::fs::canonicalize(p).ok()), path.file_name()) {
        (Some(parent), Some(name)) => parent.join(name),
        _ => path.to_path_buf(),
    }
}

/// A temporary-file builder whose file or folder gets `mode` as the umask
/// leaves it (unix), rather than the private 0600/0700 of temporary files:
/// the JUnit report and the review folder are for others to read.
fn builder_with_mode<'a>(prefix: &'a str, mode: u32) -> tempfile::Builder<'a, 'a> {
    let mut b = tempfile::Builder::new();
    b.prefix(prefix);
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        b.permissions(std::fs::Permissions::from_mode(mode));
    }
    #[cfg(not(unix))]
    let _ = mode;
    b
}

/// A review folder being built beside its destination.
pub struct Staging {
    dir: PathBuf,
    dest: PathBuf,
    shown: String,
    inputs: Vec<FileId>,
    written: std::sync::Mutex<Manifest>,
    done: bool,
}

impl Staging {
    /// Checks that `dest` may be replaced (see the module docs) and that no
    /// input lies inside it, then makes the staging folder.
    pub fn new(dest: &Path, inputs: &[PathBuf]) -> Result<Staging, String> {
        let name = shown(dest);
        let abs = absolute(dest)?;
        let ids: Vec<FileId> = inputs.iter().filter_map(|p| FileId::of(p)).collect();
        if abs.parent().is_none() {
            return Err(format!("{name}: cannot be a review folder (it has no parent folder to build it in)"));
        }
        refusal(&abs, &ids).map_err(|why| format!("{name}: {why}"))?;
        let real = resolved(&abs);
        if std::env::current_dir().is_ok_and(|cwd| resolved(&cwd).starts_with(&real)) {
            return Err(format!(
                "{name}: is the working folder or holds it, and a review folder is replaced whole; name a folder \
                 beside it"
            ));
        }
        for input in inputs {
            if resolved(input).starts_with(&real) {
                return Err(format!(
                    "{name}: refused as the review folder: the input {} lies inside it and would be replaced; name \
                     another folder",
                    shown(input)
                ));
            }
        }
        let parent = abs.parent().unwrap_or(Path::new("/"));
        std::fs::create_dir_all(parent).map_err(|e| format!("{}: cannot create: {e}", shown(parent)))?;
        let mut o = outputs();
        if o.stopping {
            return Err("interrupted".into());
        }
        let dir = builder_with_mode(".hvstack-review-", 0o777)
            .tempdir_in(parent)
            .map_err(|e| format!("{}: cannot write: {e}", shown(parent)))?
            .keep();
        o.staged.push(dir.clone());
        Ok(Staging { dir, dest: abs, shown: name, inputs: ids, written: Default::default(), done: false })
    }

    /// Writes files into `sub` ("" for the top) of the staged folder.
    pub fn write(&self, sub: &str, files: &[ReviewFile]) -> Result<(), String> {
        let o = outputs();
        if o.stopping {
            return Err("interrupted".into());
        }
        let dir = self.dir.join(sub);
        let show = |name: &str| shown(&Path::new(&self.shown).join(sub).join(name));
        std::fs::create_dir_all(&dir).map_err(|e| format!("{}: cannot create: {e}", show("")))?;
        let mut written = self.written.lock().unwrap_or_else(|e| e.into_inner());
        for f in files {
            std::fs::write(dir.join(&f.name), &f.bytes).map_err(|e| format!("{}: cannot write: {e}", show(&f.name)))?;
            let rel = if sub.is_empty() { f.name.clone() } else { format!("{sub}/{}", f.name) };
            written.insert(rel, hvstack::case::sha256_hex(&f.bytes));
        }
        drop(o);
        Ok(())
    }

    /// Swaps the staged folder in place of the destination, after checking
    /// the destination once more (moved aside first, restored on refusal).
    pub fn commit(mut self) -> Result<(), String> {
        let mut o = outputs();
        if o.stopping {
            return Err("interrupted".into());
        }
        let name = self.shown.clone();
        let manifest = self.written.lock().unwrap_or_else(|e| e.into_inner()).clone();
        std::fs::write(self.dir.join(REVIEW_MARKER), manifest_text(&manifest))
            .map_err(|e| format!("{name}: cannot write: {e}"))?;
        let parent = self.dest.parent().unwrap_or(Path::new("/")).to_path_buf();
        let moved = if std::fs::symlink_metadata(&self.dest).is_ok() {
            let holder = tempfile::Builder::new()
                .prefix(".hvstack-old-")
                .tempdir_in(&parent)
                .map_err(|e| format!("{name}: cannot replace: {e}"))?
                .keep();
            let old = holder.join("review");
            if let Err(e) = std::fs::rename(&self.dest, &old) {
                let _ = std::fs::remove_dir(&holder);
                return Err(format!("{name}: cannot replace: {e}"));
            }
            if let Err(why) = refusal(&old, &self.inputs) {
                let restored = std::fs::rename(&old, &self.dest);
                return Err(match restored {
                    Ok(()) => {
                        let _ = std::fs::remove_dir(&holder);
                        format!(
                            "{name}: not replaced: it {why}; the folder is as it was and the new review was not kept"
                        )
                    }
                    Err(e) => format!(
                        "{name}: not replaced: it {why}; it could not be put back ({e}) and is now at {}",
                        shown(&old)
                    ),
                });
            }
            Some((holder, old))
        } else {
            None
        };
        if let Err(e) = std::fs::rename(&self.dir, &self.dest) {
            let back = moved.as_ref().map(|(_, old)| std::fs::rename(old, &self.dest));
            return Err(match back {
                Some(Err(e2)) => format!(
                    "{name}: cannot replace: {e}; the earlier review could not be put back ({e2}) and is at {}",
                    shown(&moved.as_ref().map(|m| m.1.clone()).unwrap_or_default())
                ),
                _ => {
                    if let Some((holder, _)) = &moved {
                        let _ = std::fs::remove_dir(holder);
                    }
                    format!("{name}: cannot replace: {e}; the folder is as it was")
                }
            });
        }
        self.done = true;
        o.staged.retain(|p| p != &self.dir);
        o.complete.push(format!("the review folder {name}"));
        if let Some((holder, _)) = moved {
            let _ = std::fs::remove_dir_all(holder);
        }
        Ok(())
    }
}

impl Drop for Staging {
    /// An uncommitted staging folder (an error on the way) is removed.
    fn drop(&mut self) {
        if !self.done {
            let mut o = outputs();
            let _ = std::fs::remove_dir_all(&self.dir);
            o.staged.retain(|p| p != &self.dir);
        }
    }
}

/// Where a JUnit report goes.
#[derive(Debug, Clone, PartialEq)]
pub enum JunitTarget {
    /// Replace (or create) this regular file atomically.
    Replace(PathBuf),
    /// Our own standard output (`/dev/stdout` and the like).
    Stdout,
    /// Our own standard error.
    Stderr,
    /// Write through this pipe or device.
    Stream(PathBuf),
}

#[cfg(unix)]
fn std_stream_id(fd: std::os::fd::BorrowedFd) -> Option<FileId> {
    let f = std::fs::File::from(fd.try_clone_to_owned().ok()?);
    f.metadata().ok().map(|m| FileId::from_meta(&m))
}

/// The identities of our standard output and error.
fn std_streams() -> (Option<FileId>, Option<FileId>) {
    #[cfg(unix)]
    {
        use std::os::fd::AsFd;
        (std_stream_id(std::io::stdout().as_fd()), std_stream_id(std::io::stderr().as_fd()))
    }
    #[cfg(not(unix))]
    {
        (None, None)
    }
}

/// A file hvstack wrote as a JUnit report (the start of it is enough).
fn is_our_junit(path: &Path) -> bool {
    use std::io::Read;
    let mut head = Vec::new();
    let opened = std::fs::File::open(path).and_then(|f| f.take(4096).read_to_end(&mut head));
    let head = String::from_utf8_lossy(&head);
    opened.is_ok() && head.starts_with("<?xml") && head.contains("<testsuites name=\"hvstack\">")
}

/// Decides where `--junit PATH` writes, refusing what would lose data: an
/// input of this run, a folder, a file hvstack did not write, a link to
/// nothing, a path inside the review folder.
pub fn junit_target(path: &Path, inputs: &[PathBuf], review: Option<&Path>) -> Result<JunitTarget, String> {
    let name = shown(path);
    if let Some(dir) = review
        && resolved(&absolute(path)?).starts_with(resolved(&absolute(dir)?))
    {
        return Err(format!("{name}: lies inside the review folder, which is replaced whole; write it elsewhere"));
    }
    let link = match std::fs::symlink_metadata(path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            let parent = path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
            if !parent.is_dir() {
                return Err(format!("{name}: cannot write: the folder {} does not exist", shown(parent)));
            }
            return Ok(JunitTarget::Replace(path.to_path_buf()));
        }
        Err(e) => return Err(format!("{name}: cannot write: {e}")),
        Ok(m) => m,
    };
    let meta = match std::fs::metadata(path) {
        Ok(m) => m,
        Err(_) if link.file_type().is_symlink() => {
            return Err(format!("{name}: is a symbolic link to a missing file; name the file itself"));
        }
        Err(e) => return Err(format!("{name}: cannot write: {e}")),
    };
    let id = FileId::from_meta(&meta);
    let (out, err) = std_streams();
    if Some(id) == out {
        return Ok(JunitTarget::Stdout);
    }
    if Some(id) == err {
        return Ok(JunitTarget::Stderr);
    }
    if meta.is_dir() {
        return Err(format!("{name}: is a folder; name a file for the JUnit report"));
    }
    if !meta.is_file() {
        return Ok(JunitTarget::Stream(path.to_path_buf()));
    }
    if inputs.iter().filter_map(|p| FileId::of(p)).any(|i| i == id) {
        return Err(format!("{name}: is one of this run's case files; name another file for the JUnit report"));
    }
    if meta.len() > 0 && !is_our_junit(path) {
        return Err(format!(
            "{name}: exists and is not a JUnit report written by hvstack; name a new file or remove this one"
        ));
    }
    let real = std::fs::canonicalize(path).map_err(|e| format!("{name}: cannot write: {e}"))?;
    Ok(JunitTarget::Replace(real))
}

/// Opens a pipe or device for writing without blocking when a FIFO has no
/// reader (unix: O_NONBLOCK, cleared once open).
fn open_stream(path: &Path) -> std::io::Result<std::fs::File> {
    let mut options = std::fs::OpenOptions::new();
    options.write(true);
    #[cfg(unix)]
    {
        use std::os::fd::AsRawFd;
        use std::os::unix::fs::OpenOptionsExt;
        options.custom_flags(libc::O_NONBLOCK);
        let f = options.open(path)?;
        // SAFETY: fcntl on a descriptor we own; only the status flags change.
        unsafe {
            let flags = libc::fcntl(f.as_raw_fd(), libc::F_GETFL);
            if flags >= 0 {
                libc::fcntl(f.as_raw_fd(), libc::F_SETFL, flags & !libc::O_NONBLOCK);
            }
        }
        Ok(f)
    }
    #[cfg(not(unix))]
    {
        options.open(path)
    }
}

/// Writes the JUnit report (target decided again, since time has passed).
pub fn write_junit(path: &Path, inputs: &[PathBuf], review: Option<&Path>, xml: &str) -> Result<(), String> {
    let name = shown(path);
    let target = junit_target(path, inputs, review)?;
    let mut o = outputs();
    if o.stopping {
        return Err("interrupted".into());
    }
    let fail = |e: std::io::Error| match e.raw_os_error() {
        #[cfg(unix)]
        Some(libc::ENXIO) => format!("{name}: cannot write: the pipe has no reader"),
        _ => format!("{name}: cannot write: {e}"),
    };
    match &target {
        JunitTarget::Replace(real) => {
            let dir = real.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
            // a new report is readable as files usually are; a replaced one keeps its permissions
            let mut builder = builder_with_mode(".hvstack-junit-", 0o666);
            if let Ok(m) = std::fs::metadata(real) {
                builder.permissions(m.permissions());
            }
            let mut tmp = builder.tempfile_in(dir).map_err(fail)?;
            tmp.write_all(xml.as_bytes()).map_err(fail)?;
            tmp.persist(real).map_err(|e| fail(e.error))?;
        }
        JunitTarget::Stdout => std::io::stdout().lock().write_all(xml.as_bytes()).map_err(fail)?,
        JunitTarget::Stderr => std::io::stderr().lock().write_all(xml.as_bytes()).map_err(fail)?,
        JunitTarget::Stream(p) => open_stream(p).and_then(|mut f| f.write_all(xml.as_bytes())).map_err(fail)?,
    }
    o.complete.push(format!("the JUnit report {name}"));
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn manifests_round_trip_and_foreign_markers_are_not_ours() {
        let mut m = Manifest::new();
        m.insert("index.html".into(), "a".repeat(64));
        m.insert("cable/result json.json".into(), "0".repeat(64));
        assert_eq!(parse_manifest(&manifest_text(&m)), Some(m));
        assert_eq!(
            parse_manifest("Written by hvstack check --report; the whole folder is replaced on every run.\n"),
            None
        );
        assert_eq!(parse_manifest(&format!("{MARKER_HEADER}xyz  index.html\n")), None);
    }
}
