//! Output folders: how loopwright knows its own, and how a run's output replaces an earlier one
//! in one switch.
//!
//! **Ownership.** Every output folder holds [`MANIFEST`]: one line per file loopwright wrote,
//! `<SHA-256 in hex>  <path inside the folder>` (the format `sha256sum -c` reads). An existing
//! folder is replaced only when every file in it is listed there with the same hash; anything
//! else (a file not listed, a listed file changed since, a link, a folder that holds none of
//! our files) stops the run before anything is written, and the message names it. A caller
//! may ask for listed files the user edited to be replaced instead ([`Edited::Replace`], what
//! `demo --force` does); files not listed are refused all the same. A non-empty
//! folder without a manifest (not loopwright's, or written by a version before manifests) is
//! refused: the user removes it or chooses another `--out`. Entries of the earlier output that
//! this run does not write (another probe's folder, another calibration's files) are carried
//! over after their hashes are checked; entries it writes (a probe folder, the summary) are
//! replaced as a whole.
//!
//! **One switch.** The run's whole folder is written beside `out` as `.<leaf>.loopwright-new`,
//! manifest last, then swapped with `out` in one atomic exchange (`renameat2` with
//! `RENAME_EXCHANGE` on Linux, `RENAME_SWAP` on macOS); the old contents, now under the
//! temporary name, are deleted. Where the platform or file system has no exchange, `out` is
//! renamed to `.<leaf>.loopwright-old` and the new folder into its place; a run killed between
//! the two renames is completed (or, if its new folder is incomplete, rolled back) by the next
//! run. The guarantee is against a killed process; the files are not flushed to disk (a power
//! cut may lose them).
//!
//! **Lock.** `.<leaf>.loopwright-lock` beside `out` is held (`flock`) for the whole run, so a
//! second run into the same folder is refused with "another run is writing here". Holding it,
//! a run knows that any `.<leaf>.loopwright-new` or `-old` is a leftover of a killed run and
//! removes it (after completing its switch); so are `.<leaf>.loopwright-tmp-PID` folders of
//! earlier versions whose process has ended. A killed run's lock file stays until the next run.
//! A lock held in this process's own name (another thread's run, or a child forked meanwhile
//! that still holds a copy of an ended run's descriptor until it execs) is waited for up to two
//! seconds before the refusal.

use crate::error::{Error, FieldError};
use sha2::{Digest, Sha256};
use std::collections::{BTreeMap, BTreeSet};
use std::fs::{self, File, OpenOptions};
use std::io::Write;
use std::path::{Component, Path, PathBuf};

/// The manifest's file name, at the top of every output folder.
pub const MANIFEST: &str = "loopwright-manifest.sha256";

/// The longest path the platform takes, in bytes (Linux's PATH_MAX and macOS's, less the
/// terminating NUL; Windows' MAX_PATH without long-path support, likewise).
#[cfg(windows)]
const PATH_MAX: usize = 259;
#[cfg(target_vendor = "apple")]
const PATH_MAX: usize = 1023;
#[cfg(not(any(windows, target_vendor = "apple")))]
const PATH_MAX: usize = 4095;

/// The longest file or folder name (ext4, NTFS, APFS), in bytes.
const NAME_MAX: usize = 255;

/// How many names a refusal lists before "and N more".
const LIST_MAX: usize = 20;

/// How many times (10 ms apart) a run waits for a lock held in this process's name (see
/// `Lock::take`): two seconds.
const OWN_LOCK_WAITS: usize = 200;

/// The points of a run at which the writer's hook is called (after the step is done).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Step {
    /// The lock beside the output folder is held.
    Locked,
    /// Leftovers of killed runs are dealt with.
    Recovered,
    /// One file is written into the new folder.
    FileStaged,
    /// The new folder is complete, manifest included.
    Staged,
    /// (No exchange) the old output is renamed aside.
    OldAside,
    /// The new output is in place.
    Switched,
    /// The old output is deleted.
    OldRemoved,
}

/// Writes `entries` (path inside the folder, bytes) as the output folder `out`, replacing an
/// earlier loopwright output there in one switch (see the module's description).
pub fn write_output(out: &Path, entries: &[(PathBuf, Vec<u8>)]) -> Result<(), Error> {
    write_output_with(out, entries, true, &mut |_| false)
}

/// What a run does with files of the earlier output that loopwright wrote and the user has
/// edited since (their hash no longer matches the manifest).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edited {
    /// Refuse the run, naming them (the default).
    Refuse,
    /// Replace those the run writes again, keep the others as edited (the user asked for it,
    /// e.g. `demo --force`). Files loopwright did not write are refused all the same.
    Replace,
}

/// [`write_output`] with a policy for edited files.
pub fn write_output_edited(
    out: &Path,
    entries: &[(PathBuf, Vec<u8>)],
    edited: Edited,
) -> Result<(), Error> {
    write_run(out, entries, true, edited, &mut |_| false)
}

/// [`write_output`] with its test hooks: `exchange = false` uses the two-rename switch even
/// where an atomic exchange exists; `hook` is called after each [`Step`] and returning `true`
/// stops the run there as if the process had been killed (nothing is cleaned up, the lock file
/// stays). For tests of the switch.
#[doc(hidden)]
pub fn write_output_with(
    out: &Path,
    entries: &[(PathBuf, Vec<u8>)],
    exchange: bool,
    hook: &mut dyn FnMut(Step) -> bool,
) -> Result<(), Error> {
    write_run(out, entries, exchange, Edited::Refuse, hook)
}

fn write_run(
    out: &Path,
    entries: &[(PathBuf, Vec<u8>)],
    exchange: bool,
    edited: Edited,
    hook: &mut dyn FnMut(Step) -> bool,
) -> Result<(), Error> {
    let out = resolve(out)?;
    let new_entries = check_entries(entries)?;
    let (parent, leaf) = split(&out)?;
    fs::create_dir_all(&parent).map_err(|e| unwritable(&out, &parent, e))?;
    let names = TempNames::new(&parent, &leaf);
    check_lengths(&out, &names, &new_entries)?;
    let lock = Lock::take(&out, &names.lock)?;
    let mut run = Run {
        out: &out,
        names: &names,
        exchange,
        edited,
        hook,
    };
    match run.go(&new_entries) {
        Ok(()) => {
            lock.release();
            Ok(())
        }
        Err(Stop::Killed(step)) => {
            // A killed process cleans nothing up; the kernel drops its lock.
            drop(lock);
            Err(Error::Io {
                path: out.display().to_string(),
                source: std::io::Error::other(format!("run stopped by the test hook at {step:?}")),
            })
        }
        Err(Stop::Failed(e)) => {
            // Nothing was switched: the output is put back as it was, the new folder goes.
            if !exists(&out) && exists(&names.old) {
                let _ = fs::rename(&names.old, &out);
            }
            for p in [&names.new, &names.old] {
                if exists(p) {
                    let _ = fs::remove_dir_all(p);
                }
            }
            lock.release();
            Err(e)
        }
    }
}

/// Checks, before a long build, what writing `out` would meet: a folder in the way that is not
/// an unchanged loopwright output, or a place that cannot be written. Creates nothing.
pub fn preflight(out: &Path) -> Result<(), Error> {
    preflight_edited(out, Edited::Refuse)
}

/// [`preflight`] with a policy for edited files.
pub fn preflight_edited(out: &Path, edited: Edited) -> Result<(), Error> {
    let out = resolve(out)?;
    let (parent, leaf) = split(&out)?;
    check_folder_edited(&out, edited)?;
    // The nearest thing that exists on the way to `out`'s parent must be a folder that takes a
    // new file.
    let mut dir = parent.as_path();
    while !exists(dir) {
        match dir.parent() {
            Some(p) if !p.as_os_str().is_empty() => dir = p,
            _ => {
                dir = Path::new(".");
                break;
            }
        }
    }
    if !dir.is_dir() {
        return Err(refuse(
            &out,
            format!(
                "cannot be made: {} is a file, not a folder (nothing was written)",
                dir.display()
            ),
        ));
    }
    let probe = dir.join(format!(".{leaf}.loopwright-probe-{}", std::process::id()));
    OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&probe)
        .map_err(|e| unwritable(&out, dir, e))?;
    let _ = fs::remove_file(&probe);
    Ok(())
}

/// Refuses entries whose paths, under the temporary folder, would pass the platform's limits.
fn check_lengths(out: &Path, names: &TempNames, entries: &[(String, &[u8])]) -> Result<(), Error> {
    let long_name = |s: &str| s.len() > NAME_MAX;
    for (rel, _) in entries {
        if let Some(c) = rel.split('/').find(|c| long_name(c)) {
            return Err(refuse(
                out,
                format!(
                    "would hold a file or folder name of {} bytes ({c}), over the {NAME_MAX} file systems take; choose shorter names",
                    c.len()
                ),
            ));
        }
        let full = names.new.join(rel).as_os_str().len();
        if full > PATH_MAX {
            return Err(refuse(
                out,
                format!(
                    "would hold a path of {full} characters while writing ({rel}), over this \
                     platform's limit of {PATH_MAX}; choose a shorter --out (nothing was written)"
                ),
            ));
        }
    }
    let leaf = names.new.file_name().map(|n| n.len()).unwrap_or(0);
    if leaf > NAME_MAX {
        return Err(refuse(
            out,
            format!(
                "is a name too long for its temporary folder beside it ({leaf} bytes, over {NAME_MAX}); choose a shorter --out"
            ),
        ));
    }
    Ok(())
}

/// What an existing output folder holds.
#[derive(Debug, Clone, PartialEq)]
pub enum Contents {
    /// Nothing there.
    Absent,
    /// An empty folder.
    Empty,
    /// A loopwright output: its manifest, every file checked against it.
    Owned(BTreeMap<String, String>),
}

/// Checks a folder against its manifest; refuses (naming the files) when anything in it is not
/// a file loopwright wrote there, unchanged.
pub fn check_folder(dir: &Path) -> Result<Contents, Error> {
    check_folder_edited(dir, Edited::Refuse)
}

/// [`check_folder`] with a policy for edited files: with [`Edited::Replace`] a folder whose
/// only fault is edited files of its own is taken as loopwright's.
pub fn check_folder_edited(dir: &Path, edited: Edited) -> Result<Contents, Error> {
    let meta = match fs::symlink_metadata(dir) {
        Ok(m) => m,
        Err(e)
            if matches!(
                e.kind(),
                std::io::ErrorKind::NotFound | std::io::ErrorKind::NotADirectory
            ) =>
        {
            return Ok(Contents::Absent);
        }
        Err(e) => return Err(io(dir)(e)),
    };
    if meta.file_type().is_symlink() {
        return Err(refuse(
            dir,
            "is a symbolic link; name the folder itself (nothing was written)".into(),
        ));
    }
    if !meta.is_dir() {
        return Err(refuse(
            dir,
            "is a file; --out must name a folder (new, empty or an earlier loopwright output); \
             nothing was written"
                .into(),
        ));
    }
    // Without a manifest the folder is refused whatever it holds: a few names are enough to
    // say so (no walk through a home folder named by mistake).
    let has_manifest = fs::symlink_metadata(dir.join(MANIFEST)).is_ok_and(|m| m.is_file());
    let tree = walk(
        dir,
        if has_manifest {
            usize::MAX
        } else {
            4 * LIST_MAX
        },
    )?;
    if tree.files.is_empty() && tree.dirs.is_empty() && tree.others.is_empty() {
        return Ok(Contents::Empty);
    }
    if !has_manifest {
        let all = tree
            .files
            .iter()
            .chain(&tree.others)
            .cloned()
            .chain(tree.dirs.iter().map(|d| format!("{d}/")))
            .collect::<Vec<_>>();
        return Err(refuse(
            dir,
            format!(
                "holds {} that loopwright did not write (the folder has no {MANIFEST}; outputs \
                 of versions before manifests have none either); loopwright replaces only its \
                 own outputs: remove the folder yourself or choose another --out (nothing was \
                 written)",
                if all.len() >= 4 * LIST_MAX {
                    format!("{} and more", all[..LIST_MAX].join(", "))
                } else {
                    listing(&all)
                }
            ),
        ));
    }
    let text = fs::read_to_string(dir.join(MANIFEST)).map_err(io(&dir.join(MANIFEST)))?;
    let manifest = parse_manifest(&text).map_err(|line| {
        refuse(
            dir,
            format!(
                "its {MANIFEST} is not one loopwright wrote (line {line}); remove the folder \
                 yourself or choose another --out (nothing was written)"
            ),
        )
    })?;
    let mut foreign: Vec<String> = Vec::new();
    let mut changed: Vec<String> = Vec::new();
    for f in &tree.files {
        if f == MANIFEST {
            continue;
        }
        match manifest.get(f) {
            None => foreign.push(f.clone()),
            Some(h) => {
                if hash_file(&dir.join(f)).map_err(io(&dir.join(f)))? != *h {
                    changed.push(f.clone());
                }
            }
        }
    }
    foreign.extend(tree.others.iter().cloned());
    for d in &tree.dirs {
        let prefix = format!("{d}/");
        if !manifest.keys().any(|k| k.starts_with(&prefix)) {
            foreign.push(prefix);
        }
    }
    if foreign.is_empty() && (changed.is_empty() || edited == Edited::Replace) {
        return Ok(Contents::Owned(manifest));
    }
    let mut why = Vec::new();
    if !foreign.is_empty() {
        foreign.sort();
        why.push(format!(
            "{} {} not written by loopwright",
            listing(&foreign),
            if foreign.len() == 1 { "is" } else { "are" }
        ));
    }
    if !changed.is_empty() {
        why.push(format!(
            "{} changed since loopwright wrote {}",
            listing(&changed),
            if changed.len() == 1 { "it" } else { "them" }
        ));
    }
    Err(refuse(
        dir,
        format!(
            "is an earlier loopwright output, but {}; loopwright replaces only its own \
             unchanged files: move them out of the folder or choose another --out (nothing was \
             written)",
            why.join("; and ")
        ),
    ))
}

/// The SHA-256 of bytes, in lower-case hex.
pub fn sha256_hex(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

// --- the run ------------------------------------------------------------------------------

enum Stop {
    Failed(Error),
    Killed(Step),
}

impl From<Error> for Stop {
    fn from(e: Error) -> Self {
        Stop::Failed(e)
    }
}

struct TempNames {
    new: PathBuf,
    old: PathBuf,
    lock: PathBuf,
    legacy_prefix: String,
    parent: PathBuf,
}

impl TempNames {
    fn new(parent: &Path, leaf: &str) -> Self {
        TempNames {
            new: parent.join(format!(".{leaf}.loopwright-new")),
            old: parent.join(format!(".{leaf}.loopwright-old")),
            lock: parent.join(format!(".{leaf}.loopwright-lock")),
            legacy_prefix: format!(".{leaf}.loopwright-tmp-"),
            parent: parent.to_path_buf(),
        }
    }
}

struct Run<'a> {
    out: &'a Path,
    names: &'a TempNames,
    exchange: bool,
    edited: Edited,
    hook: &'a mut dyn FnMut(Step) -> bool,
}

impl Run<'_> {
    fn step(&mut self, s: Step) -> Result<(), Stop> {
        if (self.hook)(s) {
            Err(Stop::Killed(s))
        } else {
            Ok(())
        }
    }

    fn go(&mut self, entries: &[(String, &[u8])]) -> Result<(), Stop> {
        self.step(Step::Locked)?;
        self.recover()?;
        self.step(Step::Recovered)?;
        let before = check_folder_edited(self.out, self.edited)?;
        // Entries of the earlier output under a top-level name this run does not write are
        // carried over; the others are replaced as a whole.
        let tops: BTreeSet<String> = entries.iter().map(|(p, _)| top_key(p)).collect();
        let carried: Vec<(String, String)> = match &before {
            Contents::Owned(m) => m
                .iter()
                .filter(|(p, _)| !tops.contains(&top_key(p)))
                .map(|(p, h)| (p.clone(), h.clone()))
                .collect(),
            _ => Vec::new(),
        };
        self.stage(entries, &carried)?;
        self.switch(before != Contents::Absent)
    }

    /// Deals with what killed runs left: completes or rolls back an interrupted two-rename
    /// switch, then removes temporary folders.
    fn recover(&mut self) -> Result<(), Error> {
        let n = self.names;
        if !exists(self.out) && exists(&n.old) {
            let new_complete = matches!(check_folder(&n.new), Ok(Contents::Owned(_)));
            let from = if new_complete { &n.new } else { &n.old };
            fs::rename(from, self.out).map_err(io(self.out))?;
        }
        for p in [&n.new, &n.old] {
            if exists(p) {
                fs::remove_dir_all(p).map_err(io(p))?;
            }
        }
        // Temporary folders of versions before the lock, named with their process id: removed
        // when that process has ended.
        if let Ok(rd) = fs::read_dir(&n.parent) {
            for e in rd.flatten() {
                let name = e.file_name().to_string_lossy().to_string();
                let Some(pid) = name.strip_prefix(&n.legacy_prefix) else {
                    continue;
                };
                if pid.parse::<u32>().ok().and_then(sys::alive) == Some(false) {
                    let _ = fs::remove_dir_all(e.path());
                }
            }
        }
        Ok(())
    }

    fn stage(
        &mut self,
        entries: &[(String, &[u8])],
        carried: &[(String, String)],
    ) -> Result<(), Stop> {
        let root = &self.names.new;
        fs::create_dir(root).map_err(|e| unwritable(self.out, &self.names.parent, e))?;
        let mut manifest: BTreeMap<String, String> = BTreeMap::new();
        for (rel, bytes) in entries {
            write_file(root, rel, bytes)?;
            manifest.insert(rel.clone(), sha256_hex(bytes));
            self.step(Step::FileStaged)?;
        }
        for (rel, h) in carried {
            let from = self.out.join(rel);
            let bytes = fs::read(&from).map_err(io(&from))?;
            let now = sha256_hex(&bytes);
            if now != *h && self.edited == Edited::Replace {
                // An edited file this run does not write again is kept as edited.
                write_file(root, rel, &bytes)?;
                manifest.insert(rel.clone(), now);
                self.step(Step::FileStaged)?;
                continue;
            }
            if now != *h {
                return Err(Stop::Failed(refuse(
                    self.out,
                    format!("{rel} changed while this run was writing (nothing was written)"),
                )));
            }
            write_file(root, rel, &bytes)?;
            manifest.insert(rel.clone(), h.clone());
            self.step(Step::FileStaged)?;
        }
        let text: String = manifest
            .iter()
            .map(|(p, h)| format!("{h}  {p}\n"))
            .collect();
        write_file(root, MANIFEST, text.as_bytes())?;
        self.step(Step::Staged)
    }

    fn switch(&mut self, replacing: bool) -> Result<(), Stop> {
        let (out, new, old) = (self.out, &self.names.new, &self.names.old);
        if !replacing {
            fs::rename(new, out).map_err(io(out))?;
            return self.step(Step::Switched);
        }
        if self.exchange && sys::exchange(new, out).map_err(io(out))? {
            self.step(Step::Switched)?;
            // The temporary name now holds the old output. Should deleting it fail, the next
            // run removes it.
            let _ = fs::remove_dir_all(new);
            return self.step(Step::OldRemoved);
        }
        fs::rename(out, old).map_err(io(out))?;
        self.step(Step::OldAside)?;
        fs::rename(new, out).map_err(io(out))?;
        self.step(Step::Switched)?;
        let _ = fs::remove_dir_all(old);
        self.step(Step::OldRemoved)
    }
}

// --- the lock -----------------------------------------------------------------------------

struct Lock {
    path: PathBuf,
    file: File,
}

impl Lock {
    fn take(out: &Path, path: &Path) -> Result<Lock, Error> {
        let busy = || {
            let who = fs::read_to_string(path).unwrap_or_default();
            let who = who.trim();
            refuse(
                out,
                format!(
                    "another run is writing here{}; wait for it to finish (nothing was written){}",
                    if who.is_empty() {
                        String::new()
                    } else {
                        format!(" (process {who})")
                    },
                    if sys::HAS_FLOCK {
                        String::new()
                    } else {
                        format!("; if no run is active, remove {}", path.display())
                    }
                ),
            )
        };
        // A lock that names this very process is not another run: it is a run of this process
        // that has ended while a child started by another of its threads still held a copy of
        // the lock's descriptor between fork and exec (the copy goes at exec). Such a holder is
        // waited for, briefly; any other holder is refused at once.
        let ours =
            || fs::read_to_string(path).is_ok_and(|w| w.trim() == std::process::id().to_string());
        let mut waited = 0;
        // The lock file may be removed by the run that held it between our open and our lock;
        // then the lock we hold is on a file nobody else sees, and we try again.
        for _ in 0..16 + OWN_LOCK_WAITS {
            let file = match sys::open_lock(path) {
                Ok(Some(f)) => f,
                Ok(None) if waited < OWN_LOCK_WAITS && ours() => {
                    waited += 1;
                    std::thread::sleep(std::time::Duration::from_millis(10));
                    continue;
                }
                Ok(None) => return Err(busy()),
                Err(e) => return Err(unwritable(out, path.parent().unwrap_or(path), e)),
            };
            if !sys::same_file(&file, path) {
                continue;
            }
            let mut lock = Lock {
                path: path.to_path_buf(),
                file,
            };
            let _ = lock.file.set_len(0);
            let _ = write!(lock.file, "{}", std::process::id());
            return Ok(lock);
        }
        Err(busy())
    }

    fn release(self) {
        let _ = fs::remove_file(&self.path);
        drop(self.file);
    }
}

// --- platform -----------------------------------------------------------------------------

#[cfg(unix)]
mod sys {
    use std::fs::{File, OpenOptions};
    use std::path::Path;

    #[cfg(not(any(target_os = "solaris", target_os = "espidf", target_os = "horizon")))]
    pub const HAS_FLOCK: bool = true;
    #[cfg(any(target_os = "solaris", target_os = "espidf", target_os = "horizon"))]
    pub const HAS_FLOCK: bool = false;

    /// Opens and locks the lock file; `None` when another process holds it.
    #[cfg(not(any(target_os = "solaris", target_os = "espidf", target_os = "horizon")))]
    pub fn open_lock(path: &Path) -> std::io::Result<Option<File>> {
        let f = OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(path)?;
        match rustix::fs::flock(&f, rustix::fs::FlockOperation::NonBlockingLockExclusive) {
            Ok(()) => Ok(Some(f)),
            Err(e) if e == rustix::io::Errno::WOULDBLOCK => Ok(None),
            Err(e) => Err(e.into()),
        }
    }

    #[cfg(any(target_os = "solaris", target_os = "espidf", target_os = "horizon"))]
    pub fn open_lock(path: &Path) -> std::io::Result<Option<File>> {
        super::create_new_lock(path)
    }

    /// True when the open file is still the one at `path`.
    pub fn same_file(f: &File, path: &Path) -> bool {
        use std::os::unix::fs::MetadataExt;
        match (f.metadata(), std::fs::metadata(path)) {
            (Ok(a), Ok(b)) => a.ino() == b.ino() && a.dev() == b.dev(),
            _ => false,
        }
    }

    /// Swaps two folders atomically; `false` when the platform or file system cannot.
    #[cfg(any(target_os = "linux", target_os = "android", target_vendor = "apple"))]
    pub fn exchange(a: &Path, b: &Path) -> std::io::Result<bool> {
        use rustix::fs::{CWD, RenameFlags, renameat_with};
        use rustix::io::Errno;
        match renameat_with(CWD, a, CWD, b, RenameFlags::EXCHANGE) {
            Ok(()) => Ok(true),
            Err(e) if e == Errno::INVAL || e == Errno::NOSYS || e == Errno::NOTSUP => Ok(false),
            Err(e) => Err(e.into()),
        }
    }

    #[cfg(not(any(target_os = "linux", target_os = "android", target_vendor = "apple")))]
    pub fn exchange(_: &Path, _: &Path) -> std::io::Result<bool> {
        Ok(false)
    }

    /// Whether a process is running (`None` when it cannot be told).
    pub fn alive(pid: u32) -> Option<bool> {
        let pid = rustix::process::Pid::from_raw(i32::try_from(pid).ok()?)?;
        match rustix::process::test_kill_process(pid) {
            Ok(()) => Some(true),
            Err(e) if e == rustix::io::Errno::PERM => Some(true),
            Err(e) if e == rustix::io::Errno::SRCH => Some(false),
            Err(_) => None,
        }
    }
}

#[cfg(not(unix))]
mod sys {
    use std::fs::File;
    use std::path::Path;

    pub const HAS_FLOCK: bool = false;

    pub fn open_lock(path: &Path) -> std::io::Result<Option<File>> {
        super::create_new_lock(path)
    }

    pub fn same_file(_: &File, path: &Path) -> bool {
        path.exists()
    }

    pub fn exchange(_: &Path, _: &Path) -> std::io::Result<bool> {
        Ok(false)
    }

    pub fn alive(_: u32) -> Option<bool> {
        None
    }
}

/// Without `flock`, the lock is the lock file's existence.
#[allow(dead_code)]
fn create_new_lock(path: &Path) -> std::io::Result<Option<File>> {
    match OpenOptions::new().write(true).create_new(true).open(path) {
        Ok(f) => Ok(Some(f)),
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Ok(None),
        Err(e) => Err(e),
    }
}

// --- helpers ------------------------------------------------------------------------------

fn io(path: &Path) -> impl Fn(std::io::Error) -> Error + '_ {
    move |e| Error::Io {
        path: path.display().to_string(),
        source: e,
    }
}

fn refuse(out: &Path, why: String) -> Error {
    Error::Invalid(vec![FieldError::new("--out", out.display(), why)])
}

fn unwritable(out: &Path, dir: &Path, e: std::io::Error) -> Error {
    refuse(
        out,
        format!(
            "cannot write in {} ({e}); choose a folder you can write (nothing was written)",
            dir.display()
        ),
    )
}

fn exists(p: &Path) -> bool {
    fs::symlink_metadata(p).is_ok()
}

/// `out` with a real last component (`.` and `..` resolved).
fn resolve(out: &Path) -> Result<PathBuf, Error> {
    if out.as_os_str().is_empty() {
        return Err(refuse(out, "is empty; name a folder".into()));
    }
    if out.file_name().is_some() {
        return Ok(out.to_path_buf());
    }
    fs::canonicalize(out).map_err(io(out))
}

fn split(out: &Path) -> Result<(PathBuf, String), Error> {
    let leaf = out
        .file_name()
        .map(|s| s.to_string_lossy().to_string())
        .ok_or_else(|| refuse(out, "is a root folder; name a folder inside it".into()))?;
    let parent = match out.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    Ok((parent, leaf))
}

/// The entries as '/'-separated relative paths, checked: plain names only, no two equal when
/// case is ignored (they would collide on case-insensitive file systems), no file where another
/// entry needs a folder, and not the manifest's name.
fn check_entries(entries: &[(PathBuf, Vec<u8>)]) -> Result<Vec<(String, &[u8])>, Error> {
    let mut out = Vec::new();
    let mut seen: BTreeMap<String, String> = BTreeMap::new();
    let mut problems = Vec::new();
    for (p, bytes) in entries {
        let mut parts = Vec::new();
        let mut ok = true;
        for c in p.components() {
            match c {
                Component::Normal(s) => {
                    let s = s.to_string_lossy().to_string();
                    if s.contains(['\n', '\r', '\\']) {
                        ok = false;
                    }
                    parts.push(s);
                }
                _ => ok = false,
            }
        }
        let rel = parts.join("/");
        if !ok || parts.is_empty() || rel == MANIFEST {
            problems.push(FieldError::new(
                "output file",
                p.display(),
                "must be a plain relative name (and not the manifest's)",
            ));
            continue;
        }
        if let Some(other) = seen.insert(rel.to_lowercase(), rel.clone()) {
            problems.push(FieldError::new(
                "output file",
                &rel,
                format!("collides with {other} where case is ignored (as on Windows and macOS)"),
            ));
        }
        out.push((rel, bytes.as_slice()));
    }
    for (rel, _) in &out {
        let prefix = format!("{}/", rel.to_lowercase());
        if let Some(k) = seen.keys().find(|k| k.starts_with(&prefix)) {
            problems.push(FieldError::new(
                "output file",
                rel,
                format!("is both a file and the folder of {}", seen[k]),
            ));
        }
    }
    if problems.is_empty() {
        Ok(out)
    } else {
        Err(Error::Invalid(problems))
    }
}

/// The top-level name of a relative path, lower-cased (case-insensitive file systems would
/// take two spellings for one entry).
fn top_key(rel: &str) -> String {
    rel.split('/').next().unwrap_or(rel).to_lowercase()
}

fn write_file(root: &Path, rel: &str, bytes: &[u8]) -> Result<(), Error> {
    let path = root.join(rel);
    if let Some(d) = path.parent() {
        fs::create_dir_all(d).map_err(io(d))?;
    }
    fs::write(&path, bytes).map_err(io(&path))
}

struct Tree {
    files: BTreeSet<String>,
    dirs: BTreeSet<String>,
    others: BTreeSet<String>,
}

/// Everything under `root`, links not followed; stops after about `limit` entries.
fn walk(root: &Path, limit: usize) -> Result<Tree, Error> {
    let mut t = Tree {
        files: BTreeSet::new(),
        dirs: BTreeSet::new(),
        others: BTreeSet::new(),
    };
    let mut stack = vec![(root.to_path_buf(), String::new())];
    while let Some((dir, rel)) = stack.pop() {
        if t.files.len() + t.dirs.len() + t.others.len() >= limit {
            break;
        }
        for e in fs::read_dir(&dir).map_err(io(&dir))? {
            let e = e.map_err(io(&dir))?;
            let name = e.file_name().to_string_lossy().to_string();
            let r = if rel.is_empty() {
                name
            } else {
                format!("{rel}/{name}")
            };
            let ft = e.file_type().map_err(io(&e.path()))?;
            if ft.is_dir() {
                t.dirs.insert(r.clone());
                stack.push((e.path(), r));
            } else if ft.is_file() {
                t.files.insert(r);
            } else {
                t.others.insert(r);
            }
        }
    }
    Ok(t)
}

/// Parses a manifest; on a malformed line returns its number (from 1).
fn parse_manifest(text: &str) -> Result<BTreeMap<String, String>, usize> {
    let mut m = BTreeMap::new();
    for (i, line) in text.lines().enumerate() {
        let bad = i + 1;
        let (h, p) = line.split_once("  ").ok_or(bad)?;
        let plain = !p.is_empty()
            && !p.contains('\\')
            && p.split('/').all(|c| !c.is_empty() && c != "." && c != "..");
        if h.len() != 64 || !h.bytes().all(|b| b.is_ascii_hexdigit()) || !plain || p == MANIFEST {
            return Err(bad);
        }
        m.insert(p.to_string(), h.to_ascii_lowercase());
    }
    Ok(m)
}

fn hash_file(path: &Path) -> std::io::Result<String> {
    let mut h = Sha256::new();
    std::io::copy(&mut File::open(path)?, &mut h)?;
    Ok(hex(&h.finalize()))
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

fn listing(names: &[String]) -> String {
    let mut s = names
        .iter()
        .take(LIST_MAX)
        .cloned()
        .collect::<Vec<_>>()
        .join(", ");
    if names.len() > LIST_MAX {
        s.push_str(&format!(" and {} more", names.len() - LIST_MAX));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    // FIPS 180-4 / NIST CSRC example "abc" and the empty message (published test vectors).
    #[test]
    fn sha256_matches_the_published_vectors() {
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }

    #[test]
    fn manifests_with_escaping_paths_are_not_ours() {
        let h = "0".repeat(64);
        assert!(parse_manifest(&format!("{h}  a/b.txt\n")).is_ok());
        for p in ["../x", "/etc/passwd", "a//b", "a/./b", "a\\b", MANIFEST, ""] {
            assert_eq!(parse_manifest(&format!("{h}  {p}\n")), Err(1), "{p}");
        }
        assert_eq!(parse_manifest(&format!("{h} x\n")), Err(1));
        assert_eq!(parse_manifest("abc  x\n"), Err(1));
    }

    #[test]
    fn entries_that_collide_ignoring_case_are_refused() {
        let e = |p: &str| (PathBuf::from(p), Vec::new());
        assert!(check_entries(&[e("A/x"), e("b")]).is_ok());
        let err = check_entries(&[e("A/x"), e("a/X")])
            .unwrap_err()
            .to_string();
        assert!(err.contains("collides with A/x"), "{err}");
        assert!(check_entries(&[e("a"), e("a/b")]).is_err());
        assert!(check_entries(&[e("../a")]).is_err());
        assert!(check_entries(&[e(MANIFEST)]).is_err());
    }
}
