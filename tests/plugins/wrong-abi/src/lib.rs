//! A deliberately broken test plugin: its entry table announces ABI version 99. popgauge must
//! read only the leading `u32`, refuse the library, and never call the (null) functions.
//! No dependencies, so it builds fast.

/// A table from a future ABI: only the version is meaningful to today's host.
#[repr(C)]
pub struct FutureTable {
    abi_version: u32,
    reserved: u32,
    functions: [*const u8; 3],
}

// SAFETY: the table is immutable and holds only null pointers.
unsafe impl Sync for FutureTable {}

static TABLE: FutureTable = FutureTable { abi_version: 99, reserved: 0, functions: [std::ptr::null(); 3] };

/// The entry symbol, returning a table of an ABI version popgauge does not speak.
#[unsafe(no_mangle)]
pub extern "C" fn popgauge_plugin_entry() -> *const FutureTable {
    &TABLE
}
