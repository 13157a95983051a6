//! Library and ABI versions.

use core::ffi::c_char;

/// Major version of the library (from Cargo.toml; checked at compile time).
pub const PF_VERSION_MAJOR: u32 = 0;
/// Minor version of the library.
pub const PF_VERSION_MINOR: u32 = 1;
/// Patch version of the library.
pub const PF_VERSION_PATCH: u32 = 0;
/// The three version parts in one number: `major * 10000 + minor * 100 + patch`.
pub const PF_VERSION_NUMBER: u32 =
    PF_VERSION_MAJOR * 10000 + PF_VERSION_MINOR * 100 + PF_VERSION_PATCH;
/// Version of the binary interface. It changes whenever a type layout, a
/// signature or a status number changes. Before 1.0 there is no ABI promise
/// between releases: link statically, and compare `pf_abi_version()` with
/// this macro at start-up when linking dynamically.
pub const PF_ABI_VERSION: u32 = 1;

const fn parse_u32(s: &str) -> u32 {
    let b = s.as_bytes();
    let mut i = 0;
    let mut v = 0u32;
    while i < b.len() {
        v = v * 10 + (b[i] - b'0') as u32;
        i += 1;
    }
    v
}

// The version constants above are literals because cbindgen copies only
// literals into the header; these checks keep them equal to Cargo.toml.
const _: () = assert!(parse_u32(env!("CARGO_PKG_VERSION_MAJOR")) == PF_VERSION_MAJOR);
const _: () = assert!(parse_u32(env!("CARGO_PKG_VERSION_MINOR")) == PF_VERSION_MINOR);
const _: () = assert!(parse_u32(env!("CARGO_PKG_VERSION_PATCH")) == PF_VERSION_PATCH);

static VERSION: &str = concat!(env!("CARGO_PKG_VERSION"), "\0");

/// The library version as a static NUL-terminated string, e.g. "0.1.0".
///
/// Never NULL. The string is owned by the library, lives for the whole
/// program and must not be freed or modified. Thread-safe.
#[no_mangle]
pub extern "C" fn pf_version() -> *const c_char {
    VERSION.as_ptr().cast()
}

/// The ABI version of the linked library; compare with `PF_ABI_VERSION`.
///
/// Thread-safe; never fails.
#[no_mangle]
pub extern "C" fn pf_abi_version() -> u32 {
    PF_ABI_VERSION
}

/// The linked library's version as `PF_VERSION_NUMBER` spells it.
///
/// Thread-safe; never fails.
#[no_mangle]
pub extern "C" fn pf_version_number() -> u32 {
    PF_VERSION_NUMBER
}
