//! Output files that appear whole or not at all: one writer for every file lingrav writes.
//!
//! Model. An [`AtomicFile`] is opened for a target path while a command plans its work (so an
//! existing file, a missing directory or a directory in the way is reported before any
//! algebra). It is a temporary file `.NAME.lingrav-PID-K.tmp` in the target's directory; the
//! command writes into it, and [`AtomicFile::commit`] flushes it to disk and moves it to the
//! target in one step. Dropped without a commit (an error, a limit reached), the temporary is
//! removed. Every live temporary is also in a process-wide registry that
//! [`remove_temporaries`] empties; the binary calls it from its SIGINT/SIGTERM handler
//! ([`install_signal_cleanup`]) and before it stops on the memory cap, so an interrupted run
//! leaves no temporary behind.
//!
//! The rule for existing files is the same everywhere: an existing target is an error naming
//! the file unless `force` was given. Without `force` the target is put in place by a hard
//! link, which never replaces a file that appeared in the meantime.
//!
//! A data file with a sidecar ([`commit_with_sidecar`]) is put in place in this order:
//! 1. the old sidecar (if any, with `force`) is removed;
//! 2. the data file is moved into place;
//! 3. the new sidecar is moved into place.
//!
//! A reader therefore never sees a data file beside a sidecar that describes another data
//! file: an interruption leaves at worst a data file *without* a sidecar, which is
//! incomplete. The sidecar also records the data file's size and CRC-32 checksum
//! ([`Sink::checksum`]), so a mismatch (say, a data file replaced by hand) is detectable.
//!
//! **Invariants:** nothing is visible at a target until it is whole and synced; no temporary
//! outlives the process, except on SIGKILL or a power cut; a data file and a sidecar that do
//! not describe each other are never both visible.

use std::fs::{self, File};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicPtr, Ordering};

/// Why a file could not be written.
#[derive(Debug, thiserror::Error)]
pub enum FileError {
    /// The target exists and `force` was not given.
    #[error("`{0}` already exists; pass --force to replace it")]
    Exists(PathBuf),
    /// The target is a directory.
    #[error("`{0}` is a directory, not a file")]
    IsDirectory(PathBuf),
    /// The target's directory does not exist.
    #[error("cannot write `{0}`: the directory `{1}` does not exist")]
    NoDirectory(PathBuf, PathBuf),
    /// Any other I/O error.
    #[error("cannot write `{0}`: {1}")]
    Io(PathBuf, io::Error),
}

impl FileError {
    /// What to do about it, in one line.
    #[must_use]
    pub fn help(&self) -> &'static str {
        match self {
            FileError::Exists(_) => "choose another name, or pass --force",
            FileError::NoDirectory(..) => "create the directory first, or write somewhere else",
            FileError::IsDirectory(_) => "name a file, e.g. out.csv",
            FileError::Io(..) => "check that the directory exists and is writable",
        }
    }
}

// ----- the registry of live temporaries ----------------------------------------------------

/// How many temporaries can be registered at once (a command writes at most a few files).
const SLOTS: usize = 32;

/// Nul-terminated paths of live temporaries; null for a free slot. The path buffers are never
/// freed (a few bytes per file written), so a signal handler on another thread can never
/// read freed memory.
static TEMPORARIES: [AtomicPtr<u8>; SLOTS] =
    [const { AtomicPtr::new(std::ptr::null_mut()) }; SLOTS];

/// A registration: the slot and the address of the path buffer in it.
type Registration = Option<(usize, usize)>;

fn register(path: &Path) -> Registration {
    let mut bytes = path.as_os_str().as_encoded_bytes().to_vec();
    if bytes.contains(&0) {
        return None;
    }
    bytes.push(0);
    let ptr = Box::leak(bytes.into_boxed_slice()).as_mut_ptr();
    let i = TEMPORARIES.iter().position(|slot| {
        slot.compare_exchange(
            std::ptr::null_mut(),
            ptr,
            Ordering::AcqRel,
            Ordering::Acquire,
        )
        .is_ok()
    })?;
    Some((i, ptr as usize))
}

/// Frees the slot if it still holds this registration (after [`remove_temporaries`] it may
/// already hold another file's).
fn unregister(r: Registration) {
    if let Some((i, addr)) = r {
        let _ = TEMPORARIES[i].compare_exchange(
            addr as *mut u8,
            std::ptr::null_mut(),
            Ordering::AcqRel,
            Ordering::Acquire,
        );
    }
}

/// Removes every registered temporary file. Async-signal-safe on Unix (only atomic loads and
/// `unlink`), so it may be called from a signal handler.
pub fn remove_temporaries() {
    for slot in &TEMPORARIES {
        let p = slot.swap(std::ptr::null_mut(), Ordering::AcqRel);
        if !p.is_null() {
            #[cfg(unix)]
            // SAFETY: `p` is a leaked, never-freed, nul-terminated path from `register`.
            unsafe {
                libc::unlink(p.cast::<libc::c_char>());
            }
            #[cfg(not(unix))]
            {
                // SAFETY: as above; not in a signal handler on these systems.
                let c = unsafe { std::ffi::CStr::from_ptr(p.cast()) };
                if let Ok(s) = c.to_str() {
                    let _ = fs::remove_file(s);
                }
            }
        }
    }
}

/// Installs SIGINT and SIGTERM handlers that remove the registered temporaries, say so on
/// standard error and exit with 128 + the signal number (130, 143). Unix only; elsewhere a
/// no-op.
pub fn install_signal_cleanup() {
    #[cfg(unix)]
    {
        extern "C" fn on_signal(sig: libc::c_int) {
            remove_temporaries();
            let msg = b"lingrav: interrupted; temporary files removed, nothing written\n";
            // SAFETY: write and _exit are async-signal-safe.
            unsafe {
                libc::write(2, msg.as_ptr().cast(), msg.len());
                libc::_exit(128 + sig);
            }
        }
        let handler = on_signal as extern "C" fn(libc::c_int) as libc::sighandler_t;
        // SAFETY: the handler only calls async-signal-safe functions.
        unsafe {
            libc::signal(libc::SIGINT, handler);
            libc::signal(libc::SIGTERM, handler);
        }
    }
}

// ----- the writer ----------------------------------------------------------------------------

/// The checksum of `bytes` as written in sidecars: `crc32:` and 8 hex digits, the CRC-32 of
/// ISO-HDLC (the one of zlib, gzip and PNG: Python's `zlib.crc32`), computed with the
/// processor's carry-less multiplication where it has one (several bytes per cycle; the byte
/// serial FNV-1a used before cost more per value than NumPy's whole evaluation).
#[must_use]
pub fn checksum_of(bytes: &[u8]) -> String {
    let mut h = crc32fast::Hasher::new();
    h.update(bytes);
    format!("crc32:{:08x}", h.finalize())
}

/// The writer of a temporary file: buffered, counting bytes and hashing them.
pub struct Sink {
    inner: BufWriter<File>,
    bytes: u64,
    hash: crc32fast::Hasher,
}

impl Sink {
    /// Bytes written so far.
    #[must_use]
    pub fn len(&self) -> u64 {
        self.bytes
    }

    /// The checksum of what was written, as in [`checksum_of`].
    #[must_use]
    pub fn checksum(&self) -> String {
        format!("crc32:{:08x}", self.hash.clone().finalize())
    }
}

impl Write for Sink {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        let n = self.inner.write(buf)?;
        self.bytes += n as u64;
        self.hash.update(&buf[..n]);
        Ok(n)
    }

    fn flush(&mut self) -> io::Result<()> {
        self.inner.flush()
    }
}

/// A file being written: a temporary file beside the target until [`AtomicFile::commit`].
pub struct AtomicFile {
    target: PathBuf,
    temp: PathBuf,
    writer: Option<Sink>,
    force: bool,
    slot: Registration,
}

/// The directory a target goes into (`.` for a bare file name).
fn directory_of(target: &Path) -> PathBuf {
    match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

impl AtomicFile {
    /// Checks `target` and opens a temporary file for it in the target's directory.
    ///
    /// # Errors
    ///
    /// The target exists (without `force`), is a directory, its directory is missing, or the
    /// temporary file cannot be created (no permission, say).
    pub fn create(target: &Path, force: bool) -> Result<AtomicFile, FileError> {
        if target.is_dir() {
            return Err(FileError::IsDirectory(target.to_path_buf()));
        }
        if !force && fs::symlink_metadata(target).is_ok() {
            return Err(FileError::Exists(target.to_path_buf()));
        }
        let dir = directory_of(target);
        if !dir.is_dir() {
            return Err(FileError::NoDirectory(target.to_path_buf(), dir));
        }
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .ok_or_else(|| FileError::IsDirectory(target.to_path_buf()))?;
        let mut k = 0u32;
        loop {
            let temp = dir.join(format!(".{name}.lingrav-{}-{k}.tmp", std::process::id()));
            match fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&temp)
            {
                Ok(f) => {
                    let slot = register(&temp);
                    return Ok(AtomicFile {
                        target: target.to_path_buf(),
                        temp,
                        writer: Some(Sink {
                            inner: BufWriter::new(f),
                            bytes: 0,
                            hash: crc32fast::Hasher::new(),
                        }),
                        force,
                        slot,
                    });
                }
                Err(e) if e.kind() == io::ErrorKind::AlreadyExists && k < 100 => k += 1,
                Err(e) => return Err(FileError::Io(target.to_path_buf(), e)),
            }
        }
    }

    /// The path of the temporary file.
    #[cfg(test)]
    #[must_use]
    pub fn temp_path(&self) -> &Path {
        &self.temp
    }

    /// The writer of the temporary file.
    ///
    /// # Panics
    ///
    /// After [`AtomicFile::commit`] (which consumes the file, so this cannot happen).
    pub fn writer(&mut self) -> &mut Sink {
        self.writer.as_mut().expect("not yet committed")
    }

    /// Writes all of `bytes`, with the target named in the error.
    ///
    /// # Errors
    ///
    /// An I/O error.
    pub fn write_all(&mut self, bytes: &[u8]) -> Result<(), FileError> {
        let target = self.target.clone();
        self.writer()
            .write_all(bytes)
            .map_err(|e| FileError::Io(target, e))
    }

    /// Flushes and syncs the temporary file; it stays in place.
    fn finish_writing(&mut self) -> Result<(), FileError> {
        let io = |e| FileError::Io(self.target.clone(), e);
        let w = self.writer.take().expect("committed once");
        let f = w.inner.into_inner().map_err(|e| io(e.into_error()))?;
        f.sync_all().map_err(io)?;
        Ok(())
    }

    /// Moves the (finished) temporary file to the target.
    fn place(&mut self) -> Result<(), FileError> {
        let io = |e| FileError::Io(self.target.clone(), e);
        if self.force {
            fs::rename(&self.temp, &self.target).map_err(io)?;
        } else {
            // A hard link never replaces an existing file; where links are not supported,
            // check and rename.
            match fs::hard_link(&self.temp, &self.target) {
                Ok(()) => {
                    let _ = fs::remove_file(&self.temp);
                }
                Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {
                    return Err(FileError::Exists(self.target.clone()));
                }
                Err(_) => {
                    if fs::symlink_metadata(&self.target).is_ok() {
                        return Err(FileError::Exists(self.target.clone()));
                    }
                    fs::rename(&self.temp, &self.target).map_err(io)?;
                }
            }
        }
        unregister(self.slot.take());
        Ok(())
    }

    /// Flushes the temporary file to disk and moves it to the target.
    ///
    /// # Errors
    ///
    /// An I/O error, or (without `force`) a target that appeared in the meantime; the
    /// temporary file is removed.
    pub fn commit(mut self) -> Result<(), FileError> {
        self.finish_writing()?;
        self.place()
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        if self.slot.is_some() || self.writer.is_some() {
            self.writer.take();
            let _ = fs::remove_file(&self.temp);
            unregister(self.slot.take());
        }
    }
}

/// Puts a data file and its sidecar in place, in the order documented in the module docs:
/// old sidecar removed, data moved into place, sidecar moved into place. Without `force`,
/// a failure to place the sidecar removes the data file this call placed.
///
/// # Errors
///
/// The first failure; no temporary remains.
pub fn commit_with_sidecar(mut data: AtomicFile, mut sidecar: AtomicFile) -> Result<(), FileError> {
    data.finish_writing()?;
    sidecar.finish_writing()?;
    if sidecar.force {
        match fs::remove_file(&sidecar.target) {
            Ok(()) => {}
            Err(e) if e.kind() == io::ErrorKind::NotFound => {}
            Err(e) => return Err(FileError::Io(sidecar.target.clone(), e)),
        }
    }
    let existed = fs::symlink_metadata(&data.target).is_ok();
    data.place()?;
    if let Err(e) = sidecar.place() {
        if !existed {
            let _ = fs::remove_file(&data.target);
        }
        return Err(e);
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn atomic_files_do_not_clobber() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.csv");
        let mut f = AtomicFile::create(&p, false).unwrap();
        f.writer().write_all(b"one").unwrap();
        assert!(!p.exists(), "nothing at the target before the commit");
        f.commit().unwrap();
        assert_eq!(fs::read_to_string(&p).unwrap(), "one");
        assert!(matches!(
            AtomicFile::create(&p, false),
            Err(FileError::Exists(_))
        ));
        let mut f = AtomicFile::create(&p, true).unwrap();
        f.writer().write_all(b"two").unwrap();
        f.commit().unwrap();
        assert_eq!(fs::read_to_string(&p).unwrap(), "two");
        // Dropped without a commit: no trace.
        let q = dir.path().join("b.csv");
        let mut f = AtomicFile::create(&q, false).unwrap();
        f.writer().write_all(b"x").unwrap();
        drop(f);
        assert_eq!(names(dir.path()), ["a.csv"]);
        assert!(matches!(
            AtomicFile::create(&dir.path().join("no/such/dir/c.csv"), false),
            Err(FileError::NoDirectory(..))
        ));
        assert!(matches!(
            AtomicFile::create(dir.path(), true),
            Err(FileError::IsDirectory(_))
        ));
    }

    #[test]
    fn a_target_that_appears_meanwhile_is_kept_and_no_temporary_remains() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.svg");
        let mut f = AtomicFile::create(&p, false).unwrap();
        f.write_all(b"new").unwrap();
        fs::write(&p, "theirs").unwrap();
        assert!(matches!(f.commit(), Err(FileError::Exists(_))));
        assert_eq!(fs::read_to_string(&p).unwrap(), "theirs");
        assert_eq!(names(dir.path()), ["a.svg"]);
    }

    #[test]
    fn live_temporaries_are_registered_until_placed() {
        // (Removing them is tested on the binary, with a signal: here it would remove the
        // temporaries of tests running beside this one.)
        let registered = |p: &Path| {
            TEMPORARIES.iter().any(|slot| {
                let ptr = slot.load(Ordering::Acquire);
                // SAFETY: registered paths are leaked, nul-terminated and never freed.
                !ptr.is_null()
                    && unsafe { std::ffi::CStr::from_ptr(ptr.cast()) }.to_bytes()
                        == p.as_os_str().as_encoded_bytes()
            })
        };
        let dir = tempfile::tempdir().unwrap();
        let f = AtomicFile::create(&dir.path().join("x.csv"), false).unwrap();
        let temp = f.temp_path().to_path_buf();
        assert!(temp.exists() && registered(&temp));
        f.commit().unwrap();
        assert!(!registered(&temp));
        let g = AtomicFile::create(&dir.path().join("y.csv"), false).unwrap();
        let temp = g.temp_path().to_path_buf();
        drop(g);
        assert!(!temp.exists() && !registered(&temp));
        assert_eq!(names(dir.path()), ["x.csv"]);
    }

    #[test]
    fn sidecar_order_and_checksum() {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path().join("o.csv");
        let m = dir.path().join("o.csv.meta.json");
        fs::write(&d, "old").unwrap();
        fs::write(&m, "old meta").unwrap();
        let mut data = AtomicFile::create(&d, true).unwrap();
        data.write_all(b"new data").unwrap();
        assert_eq!(data.writer().len(), 8);
        assert_eq!(data.writer().checksum(), checksum_of(b"new data"));
        let mut side = AtomicFile::create(&m, true).unwrap();
        side.write_all(b"new meta").unwrap();
        commit_with_sidecar(data, side).unwrap();
        assert_eq!(fs::read_to_string(&d).unwrap(), "new data");
        assert_eq!(fs::read_to_string(&m).unwrap(), "new meta");
        assert_eq!(names(dir.path()), ["o.csv", "o.csv.meta.json"]);
        // The CRC-32 check value of "123456789" is cbf43926 (common practice: the catalogue
        // value of CRC-32/ISO-HDLC); of the empty string, 0.
        assert_eq!(checksum_of(b""), "crc32:00000000");
        assert_eq!(checksum_of(b"123456789"), "crc32:cbf43926");
    }
}
