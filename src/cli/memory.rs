//! The command's allocator: the system allocator, asking the kernel for
//! transparent huge pages on large blocks.
//!
//! A check of a million nodes allocates vectors of several megabytes by the
//! hundred (grids, stencils, matrices, multigrid levels, fields). With 4 KiB
//! pages every first touch of a page faults, and a page first read as zero
//! and then written faults twice, the second time with a TLB flush on every
//! core: measured 0.47 s of system time in a 1.1 s check of
//! `benches/cases/square-1024.yaml`. Where the kernel gives huge pages on
//! request (`/sys/kernel/mm/transparent_hugepage/enabled` set to `madvise`
//! or `always`) a 2 MiB page faults once: 0.10 s. Elsewhere the advice is
//! ignored. This is what glibc does for its own large blocks under the
//! `glibc.malloc.hugetlb=1` tunable, which can only be set from the
//! environment before the program starts.
//!
//! glibc also serves blocks above its mmap threshold (32 MiB at most) with
//! fresh mappings and returns them on free, so every such vector is zeroed
//! again by the kernel: at 2048² nodes (34 MB vectors) 29 % of the check
//! was the kernel clearing pages, and the check took 3.3-4.7 s against
//! 0.77 s at 1024² (8 MB vectors, which the heap recycles). [`configure`]
//! keeps large blocks on the heap: 2.8-3.2 s, the same peak memory.

use std::alloc::{GlobalAlloc, Layout, System};

/// Blocks at least this large are advised (smaller ones rarely span a
/// whole aligned huge page).
const ADVISED_BYTES: usize = 4 << 20;
/// The huge page size of x86-64 and of most 64-bit ARM kernels.
const HUGE_PAGE: usize = 2 << 20;

/// Sets glibc's allocator to serve every block from its heaps and keep
/// what is freed for reuse (see the module docs); nothing elsewhere.
pub fn configure() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: mallopt only changes the allocator's policy; it is called
    // first thing in `main`, before any thread exists.
    unsafe {
        libc::mallopt(libc::M_MMAP_MAX, 0);
        libc::mallopt(libc::M_TRIM_THRESHOLD, i32::MAX);
    }
}

/// The system allocator with huge-page advice on large blocks.
pub struct HugePages;

/// Advises huge pages for the aligned 2 MiB pages inside a block.
fn advise(ptr: *mut u8, size: usize) {
    if ptr.is_null() || size < ADVISED_BYTES {
        return;
    }
    let start = (ptr as usize).next_multiple_of(HUGE_PAGE);
    let end = (ptr as usize + size) / HUGE_PAGE * HUGE_PAGE;
    if end > start {
        // SAFETY: the range lies inside a block this allocator just handed
        // out; MADV_HUGEPAGE only changes how the kernel backs it, never its
        // contents, and a refusal (no such support) is harmless.
        unsafe {
            libc::madvise(start as *mut libc::c_void, end - start, libc::MADV_HUGEPAGE);
        }
    }
}

// SAFETY: every call is passed on to `System` unchanged; the advice does
// not touch the memory's contents or ownership.
unsafe impl GlobalAlloc for HugePages {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // SAFETY: the caller's contract is `System`'s.
        let p = unsafe { System.alloc(layout) };
        advise(p, layout.size());
        p
    }

    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        // SAFETY: as above.
        let p = unsafe { System.alloc_zeroed(layout) };
        advise(p, layout.size());
        p
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: as above.
        unsafe { System.dealloc(ptr, layout) }
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        // SAFETY: as above.
        let p = unsafe { System.realloc(ptr, layout, new_size) };
        advise(p, new_size);
        p
    }
}
