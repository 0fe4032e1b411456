//! A deliberately broken test plugin: a shared library without `popgauge_plugin_entry`.
//! popgauge must refuse it with "entry symbol missing". No dependencies, so it builds fast.

/// Some exported function that is not the entry symbol.
#[unsafe(no_mangle)]
pub extern "C" fn popgauge_plugin_entry_v2() -> u32 {
    7
}
