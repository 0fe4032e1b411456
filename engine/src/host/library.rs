//! A plugin library loaded into this process, and the two calls into it.
//!
//! Used directly for `isolation = "in-process"`, and by the worker child for the default
//! process isolation. Every buffer the library returns is copied into host memory and then
//! handed back to the library's `free_buf`.

use std::path::Path;

use libloading::Library;
use popgauge_abi::ffi::{
    ABI_VERSION, DescribeFn, ENTRY_SYMBOL, EntryFn, ForeignView, FreeFn, PgBuf, PgPlugin, PgStr, RunFn,
};
use popgauge_abi::{Descriptor, GenotypeView, StepError};

use super::{LoadError, check_abi_version, parse_descriptor};

/// A library whose entry table has been checked.
pub struct LoadedLibrary {
    describe: DescribeFn,
    run: RunFn,
    free_buf: FreeFn,
    // Declared last so that it is dropped (and the library unloaded) after the pointers above
    // are no longer reachable.
    _library: Library,
}

// SAFETY: the ABI requires `describe`, `run` and `free_buf` to be callable from any thread
// (DEVELOPERS.md, "Writing a plugin"); the table holds nothing else.
unsafe impl Send for LoadedLibrary {}
// SAFETY: as for `Send`.
unsafe impl Sync for LoadedLibrary {}

impl LoadedLibrary {
    /// Loads `path` (already hash-checked), finds the entry symbol and checks the table's ABI
    /// version before reading anything else of it.
    ///
    /// # Errors
    /// [`LoadError::NotALibrary`], [`LoadError::EntrySymbol`], [`LoadError::AbiVersion`] or
    /// [`LoadError::IncompleteTable`]; `shown` names the library in the message.
    pub fn open(path: &Path, shown: &str) -> Result<LoadedLibrary, LoadError> {
        // SAFETY: loading runs the library's initialisers; a plugin is code the recipe trusts by
        // its pinned SHA-256, and process isolation contains what it does.
        let library = unsafe { Library::new(path) }.map_err(|e| LoadError::NotALibrary {
            path: shown.into(),
            reason: loader_reason(&e.to_string(), path),
        })?;
        // SAFETY: the symbol's type is the ABI's entry signature.
        let entry: EntryFn = match unsafe { library.get::<EntryFn>(ENTRY_SYMBOL) } {
            Ok(symbol) => *symbol,
            Err(_) => return Err(LoadError::EntrySymbol { path: shown.into(), expected: ENTRY_SYMBOL.into() }),
        };
        // SAFETY: the entry takes no arguments and returns a pointer to a static table.
        let table = unsafe { entry() };
        let incomplete = |function: &str| LoadError::IncompleteTable { path: shown.into(), function: function.into() };
        if table.is_null() {
            return Err(incomplete(ENTRY_SYMBOL));
        }
        // SAFETY: every ABI version starts its table with the `u32` version; nothing else is
        // read until it matches.
        let version = unsafe { table.cast::<u32>().read() };
        check_abi_version(version, shown)?;
        // SAFETY: the version matches, so the table has this crate's layout.
        let table: &PgPlugin = unsafe { &*table };
        debug_assert_eq!(table.abi_version, ABI_VERSION);
        Ok(LoadedLibrary {
            describe: table.describe.ok_or_else(|| incomplete("describe"))?,
            run: table.run.ok_or_else(|| incomplete("run"))?,
            free_buf: table.free_buf.ok_or_else(|| incomplete("free_buf"))?,
            _library: library,
        })
    }

    /// The library's raw descriptor bytes and status.
    pub fn describe_raw(&self) -> (i32, Vec<u8>) {
        let mut out = PgBuf::EMPTY;
        // SAFETY: `out` is writable; the library fills it.
        let status = unsafe { (self.describe)(&mut out) };
        (status, self.take(out))
    }

    /// The library's descriptor, parsed and checked.
    ///
    /// # Errors
    /// [`LoadError::Descriptor`] when it fails to describe itself or the JSON is not a descriptor.
    pub fn describe(&self, shown: &str) -> Result<Descriptor, LoadError> {
        let (status, bytes) = self.describe_raw();
        if status != popgauge_abi::ffi::STATUS_OK {
            let message = String::from_utf8_lossy(&bytes).into_owned();
            return Err(LoadError::Descriptor { path: shown.into(), reason: format!("describing itself failed: {message}") });
        }
        parse_descriptor(&bytes, shown)
    }

    /// Runs the step on `view` with the request JSON; returns the status and the bytes.
    ///
    /// # Errors
    /// A [`StepError`] when the view cannot be laid out for the ABI.
    pub fn run(&self, view: &GenotypeView<'_>, request: &[u8]) -> Result<(i32, Vec<u8>), StepError> {
        let foreign = ForeignView::new(view).map_err(|e| StepError::new(e.to_string()))?;
        let ffi_view = foreign.as_ffi();
        let mut out = PgBuf::EMPTY;
        let request = PgStr { ptr: request.as_ptr(), len: request.len() as u64 };
        // SAFETY: `ffi_view` points into `foreign` and the matrix, both alive and unmodified for
        // the call; `request` into the caller's bytes; `out` is writable.
        let status = unsafe { (self.run)(&ffi_view, request, &mut out) };
        Ok((status, self.take(out)))
    }

    /// Copies a returned buffer into host memory and gives it back to the library.
    fn take(&self, out: PgBuf) -> Vec<u8> {
        // SAFETY: the library wrote `ptr..ptr+len` (or nothing).
        let bytes = unsafe { PgStr { ptr: out.ptr, len: out.len }.as_bytes() }.to_vec();
        if !out.ptr.is_null() {
            // SAFETY: the buffer came from this library and is freed once.
            unsafe { (self.free_buf)(out) };
        }
        bytes
    }
}

/// The loader's message without the private copy's path (which changes on every run).
fn loader_reason(message: &str, path: &Path) -> String {
    let shown = path.display().to_string();
    message.replace(&format!("{shown}: "), "").replace(&shown, "the library")
}
