//! Small blocks for the binary's allocator, carved from one fixed region and reused by size.
//!
//! A `check` of the shipped example makes about 6,000 allocations, nearly all of them
//! under a kilobyte, and keeps most of them to the end; the C library's allocator spent
//! about a seventh of the run's instructions on them (callgrind, 1.06 of 7.25 million for
//! a JSON check), most of it taking fresh memory from the top of its heap. Here a block of
//! up to [`LARGEST_POOLED`] bytes (alignment up to 16) is rounded up to its size class and
//! taken from that class's free list, or else cut from the current thread's stretch of the
//! region by moving a pointer; a freed block goes on the front of its class's list, and
//! the last block cut grows where it is. Larger blocks, stricter alignments and everything
//! once the region is used up go to the system allocator, and a block is given back to
//! whichever of the two it came from (its address says which), so the two never mix.
//!
//! The region is a zero-initialised static, so it costs neither a system call nor memory
//! until a page of it is first written; per-thread state is in const-initialised thread
//! locals, which allocate nothing. A thread takes the region in stretches of
//! [`STRETCH_BYTES`]; a thread's free lists are its own, so a block freed on another
//! thread than the one that took it simply joins that thread's list.
//!
//! On Linux the region asks for huge pages (`madvise(MADV_HUGEPAGE)`, a hint the kernel
//! may ignore) when its first stretch is taken. On the development machine (a virtual
//! machine, transparent huge pages on "madvise") the first write to a fresh 4 KiB page
//! costs about 2.5 µs, and a run wrote about 190 of them for its heap and its output
//! buffer; one 2 MiB page costs about 0.2 ms to clear and holds all of it (page faults per
//! run 395 before the pool, 169 with it). Where the kernel has no huge page at hand it
//! may first compact memory, which can make one run slower; where huge pages are off, the
//! region is ordinary pages.
//!
//! What this gives up: freed blocks are not merged, so a size class's memory is reused
//! only by blocks of that class. For a run that ends within milliseconds that is a few
//! pages; for a long run the region is soon used up and the system allocator takes over,
//! so memory stays linear in the input either way (a generated design of 25,000
//! barriers: peak resident memory 437 MB against 416 MB with the C library's allocator
//! alone, `scripts/bench-size.sh`).

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::{Cell, UnsafeCell};
use std::sync::atomic::{AtomicUsize, Ordering};

/// The largest block served from the region; larger ones go to the system allocator.
pub const LARGEST_POOLED: usize = 1024 * 1024;

/// Blocks up to this size are in classes 16 bytes apart; above it, in powers of two.
const FINE_UP_TO: usize = 1024;
const FINE_STEP: usize = 16;
const FINE_CLASSES: usize = FINE_UP_TO / FINE_STEP;
/// 2, 4, 8, ... 1024 KiB.
const COARSE_CLASSES: usize = 10;
const CLASSES: usize = FINE_CLASSES + COARSE_CLASSES;

/// Every block is aligned to this (classes are multiples of it, and so are stretches).
const BLOCK_ALIGN: usize = 16;

/// How much of the region a thread takes at a time.
const STRETCH_BYTES: usize = 2 * 1024 * 1024;

/// The size of the region (address space; only pages written to take memory).
const REGION_BYTES: usize = 64 * 1024 * 1024;

#[repr(C, align(2097152))]
struct Region(UnsafeCell<[u8; REGION_BYTES]>);

// SAFETY: the region's bytes are handed out in disjoint blocks (stretches by an atomic
// counter, blocks within a stretch by one thread only); no two owners share a byte.
unsafe impl Sync for Region {}

static REGION: Region = Region(UnsafeCell::new([0; REGION_BYTES]));

/// Offset of the first stretch not yet taken by any thread.
static TAKEN: AtomicUsize = AtomicUsize::new(0);

thread_local! {
    /// The current thread's stretch: the next free address and the stretch's end.
    static NEXT: Cell<usize> = const { Cell::new(0) };
    static END: Cell<usize> = const { Cell::new(0) };
    /// The first free block of each class (0: none); a free block holds the next one's
    /// address in its first word.
    static FREE: [Cell<usize>; CLASSES] = const { [const { Cell::new(0) }; CLASSES] };
}

/// The size class of a block of `size` bytes, or `None` above [`LARGEST_POOLED`].
fn class_of(size: usize) -> Option<usize> {
    if size <= FINE_UP_TO {
        Some(size.max(1).div_ceil(FINE_STEP) - 1)
    } else if size <= LARGEST_POOLED {
        // 1025..=2048 -> the first coarse class, and so on by powers of two.
        let bits = (usize::BITS - (size - 1).leading_zeros()) as usize;
        Some(FINE_CLASSES + bits - 11)
    } else {
        None
    }
}

/// The bytes a block of class `class` occupies.
fn class_size(class: usize) -> usize {
    if class < FINE_CLASSES {
        (class + 1) * FINE_STEP
    } else {
        1 << (class - FINE_CLASSES + 11)
    }
}

fn region_start() -> usize {
    REGION.0.get() as usize
}

/// Whether `ptr` was handed out from the region (and so must be given back to it).
fn in_region(ptr: *mut u8) -> bool {
    let at = ptr as usize;
    let start = region_start();
    at >= start && at < start + REGION_BYTES
}

/// A block of class `class` from the current thread's free list or stretch; null when the
/// region is used up (or the thread's state is gone, at its very end).
fn take(class: usize) -> *mut u8 {
    match take_freed(class) {
        Some(0) => cut(class_size(class)),
        Some(head) => head as *mut u8,
        None => std::ptr::null_mut(),
    }
}

/// The first block on the current thread's free list of `class` (0 when the list is
/// empty; `None` while the thread is being torn down).
fn take_freed(class: usize) -> Option<usize> {
    FREE.try_with(|free| {
        let head = free[class].get();
        if head != 0 {
            // SAFETY: a block on a free list is ours, at least a word long, and aligned;
            // its first word was written when it was freed.
            let next = unsafe { (head as *const usize).read() };
            free[class].set(next);
        }
        head
    })
    .ok()
}

/// `size` bytes (a multiple of [`BLOCK_ALIGN`]) cut from the current thread's stretch,
/// taking a new stretch when it is too short; null when the region is used up.
fn cut(size: usize) -> *mut u8 {
    let (Ok(next), Ok(end)) = (NEXT.try_with(Cell::get), END.try_with(Cell::get)) else {
        return std::ptr::null_mut();
    };
    if end - next >= size {
        let _ = NEXT.try_with(|n| n.set(next + size));
        return next as *mut u8;
    }
    cut_from_new_stretch(size)
}

/// [`cut`] without taking a new stretch: the same block where the current stretch has room
/// for it, `None` where it has not (or the thread's state is gone, at its very end).
#[inline(always)]
fn cut_in_stretch(size: usize) -> Option<*mut u8> {
    let (Ok(next), Ok(end)) = (NEXT.try_with(Cell::get), END.try_with(Cell::get)) else {
        return None;
    };
    if end - next < size {
        return None;
    }
    let _ = NEXT.try_with(|n| n.set(next + size));
    Some(next as *mut u8)
}

/// A block of class `class` from the current thread's free list or its current stretch,
/// what nearly every allocation takes; `None` where [`take`] would have to take a new
/// stretch (or the thread is being torn down).
#[inline(always)]
fn take_at_hand(class: usize) -> Option<*mut u8> {
    match take_freed(class)? {
        0 => cut_in_stretch(class_size(class)),
        head => Some(head as *mut u8),
    }
}

/// [`cut`] when the current stretch is too short: `size` bytes from the start of a new
/// stretch. Once per stretch (2 MiB), so kept out of line.
#[cold]
#[inline(never)]
fn cut_from_new_stretch(size: usize) -> *mut u8 {
    // The rest of the old stretch is left unused (never written, so it costs nothing).
    let offset = TAKEN.fetch_add(STRETCH_BYTES, Ordering::Relaxed);
    if offset + STRETCH_BYTES > REGION_BYTES {
        // Used up: keep the counter from wrapping however many more calls come.
        TAKEN.store(REGION_BYTES, Ordering::Relaxed);
        return std::ptr::null_mut();
    }
    let start = region_start() + offset;
    if offset == 0 {
        advise_huge_pages(region_start(), REGION_BYTES);
    }
    let _ = END.try_with(|e| e.set(start + STRETCH_BYTES));
    let _ = NEXT.try_with(|n| n.set(start + size));
    start as *mut u8
}

#[cfg(target_os = "linux")]
fn advise_huge_pages(start: usize, len: usize) {
    use std::ffi::{c_int, c_void};
    unsafe extern "C" {
        fn madvise(addr: *mut c_void, len: usize, advice: c_int) -> c_int;
    }
    const MADV_HUGEPAGE: c_int = 14;
    // SAFETY: the range is the region, mapped for the whole run; advice changes no
    // contents. A refusal (no huge pages on this system) leaves ordinary pages.
    let _ = unsafe { madvise(start as *mut c_void, len, MADV_HUGEPAGE) };
}

#[cfg(not(target_os = "linux"))]
fn advise_huge_pages(_start: usize, _len: usize) {}

/// Whether the block at `ptr`, `old` bytes long, was the last one cut from the current
/// thread's stretch and the stretch has room for it to be `new` bytes long; if so, it now
/// is (a growing buffer is then not copied). A block that shrinks stays where it is, in
/// its class, whether or not it was the last.
fn grow_in_place(ptr: *mut u8, old: usize, new: usize) -> bool {
    let (Ok(next), Ok(end)) = (NEXT.try_with(Cell::get), END.try_with(Cell::get)) else {
        return false;
    };
    let at = ptr as usize;
    if new <= old || at + old != next || end - at < new {
        return false;
    }
    NEXT.try_with(|n| n.set(at + new)).is_ok()
}

/// Puts a block of class `class` back on the current thread's free list (or, at the very
/// end of a thread, leaves it unused).
fn give_back(ptr: *mut u8, class: usize) {
    let _ = FREE.try_with(|free| {
        // SAFETY: the block is at least a word long and aligned, and no longer in use.
        unsafe { (ptr as *mut usize).write(free[class].get()) };
        free[class].set(ptr as usize);
    });
}

/// [`BlockPool::alloc`] where the block is not at hand: the general path (free list, the
/// stretch, a new stretch, then the system allocator). Out of line, so that the common
/// path in `alloc` saves and restores no registers and ends in this call as a jump (about
/// 25 instructions less per allocation than with everything in one function; a check of
/// the example makes some 5,000).
///
/// # Safety
/// As for [`GlobalAlloc::alloc`].
#[cold]
#[inline(never)]
unsafe fn alloc_slow(layout: Layout) -> *mut u8 {
    if let Some(class) = BlockPool::pooled_class(layout) {
        let block = take(class);
        if !block.is_null() {
            return block;
        }
    }
    // SAFETY: the caller's contract is passed on unchanged.
    unsafe { System.alloc(layout) }
}

/// The region's blocks, with the system allocator beside them (see the module comment).
pub struct BlockPool;

impl BlockPool {
    fn pooled_class(layout: Layout) -> Option<usize> {
        if layout.align() > BLOCK_ALIGN {
            return None;
        }
        class_of(layout.size())
    }
}

// SAFETY: a block from the region is `class_size` bytes at an address aligned to 16, owned
// by its caller until it is given back; a pooled layout's size fits its class and its
// alignment divides 16. Everything else is passed to the system allocator unchanged, and
// a block is freed or resized by the allocator its address belongs to.
unsafe impl GlobalAlloc for BlockPool {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // What `alloc_slow` does, its common case first: both give the block `take` gives.
        if let Some(class) = Self::pooled_class(layout)
            && let Some(block) = take_at_hand(class)
        {
            return block;
        }
        // SAFETY: the caller's contract is passed on unchanged.
        unsafe { alloc_slow(layout) }
    }

    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        if let Some(class) = Self::pooled_class(layout) {
            match take_freed(class) {
                Some(0) => {
                    // Never handed out before: the region starts zeroed (a static), and
                    // nothing is written beyond the last block cut.
                    let block = cut(class_size(class));
                    if !block.is_null() {
                        return block;
                    }
                }
                Some(head) => {
                    // A reused block holds its last owner's bytes.
                    let block = head as *mut u8;
                    // SAFETY: the block is at least `layout.size()` bytes and ours.
                    unsafe { block.write_bytes(0, layout.size()) };
                    return block;
                }
                None => {}
            }
        }
        // SAFETY: as above.
        unsafe { System.alloc_zeroed(layout) }
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        if in_region(ptr) {
            // A block in the region was cut for this layout's class (sizes and alignments
            // are those it was allocated with).
            if let Some(class) = Self::pooled_class(layout) {
                give_back(ptr, class);
            }
            return;
        }
        // SAFETY: the block came from the system allocator with this layout.
        unsafe { System.dealloc(ptr, layout) }
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        if !in_region(ptr) {
            // SAFETY: the block came from the system allocator with this layout.
            return unsafe { System.realloc(ptr, layout, new_size) };
        }
        let old_class = Self::pooled_class(layout);
        // SAFETY: `new_size`, rounded up to the alignment, does not overflow (the
        // caller's contract), so the layout is valid.
        let new_layout = unsafe { Layout::from_size_align_unchecked(new_size, layout.align()) };
        let new_class = Self::pooled_class(new_layout);
        if old_class.is_some() && new_class == old_class {
            return ptr;
        }
        if let (Some(old), Some(new)) = (old_class, new_class)
            && grow_in_place(ptr, class_size(old), class_size(new))
        {
            return ptr;
        }
        // SAFETY: as for `alloc`.
        let moved = unsafe { self.alloc(new_layout) };
        if !moved.is_null() {
            // SAFETY: both blocks are ours and hold at least the smaller size.
            unsafe {
                std::ptr::copy_nonoverlapping(ptr, moved, layout.size().min(new_size));
                self.dealloc(ptr, layout);
            }
        }
        moved
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_size_fits_its_class_and_classes_grow() {
        let mut last = 0;
        for size in 1..=LARGEST_POOLED {
            let class = class_of(size).expect("pooled size");
            assert!(class < CLASSES);
            assert!(class_size(class) >= size, "size {size} in class {class}");
            assert_eq!(class_size(class) % BLOCK_ALIGN, 0);
            assert!(class >= last);
            last = class;
            // The class below would not hold it.
            if class > 0 {
                assert!(
                    class_size(class - 1) < size,
                    "size {size} could use class {}",
                    class - 1
                );
            }
        }
        assert_eq!(class_of(LARGEST_POOLED + 1), None);
        assert_eq!(class_size(CLASSES - 1), LARGEST_POOLED);
    }

    /// A pseudo-random sequence (xorshift) of allocations, reallocations and frees of
    /// sizes on both sides of every boundary, each block filled with its own byte: every
    /// block keeps its bytes until freed, is aligned as asked, and no two live blocks
    /// overlap.
    #[test]
    fn blocks_keep_their_bytes_and_never_overlap() {
        let pool = BlockPool;
        let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = move || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        let sizes = [
            1,
            7,
            8,
            15,
            16,
            17,
            24,
            100,
            1000,
            1024,
            1025,
            2048,
            2049,
            5000,
            65536,
            65537,
            100_000,
            LARGEST_POOLED,
            LARGEST_POOLED + 1,
        ];
        let aligns = [1, 2, 8, 16, 32, 4096];
        // (address, layout, fill byte)
        let mut live: Vec<(*mut u8, Layout, u8)> = Vec::new();
        // Every byte of a small block; both ends and every 997th byte of a large one.
        let check = |ptr: *mut u8, size: usize, fill: u8| {
            // SAFETY: the block is live and at least `size` bytes long.
            let bytes = unsafe { std::slice::from_raw_parts(ptr, size) };
            let ok = if size <= 4096 {
                bytes.iter().all(|&b| b == fill)
            } else {
                bytes
                    .iter()
                    .step_by(997)
                    .chain(&bytes[size - 64..])
                    .all(|&b| b == fill)
            };
            assert!(ok, "a block of {size} bytes lost its bytes");
        };
        for step in 0..20_000u32 {
            let roll = next();
            if live.is_empty() || (live.len() < 48 && roll % 3 != 0) {
                let size = sizes[(next() % sizes.len() as u64) as usize];
                let align = aligns[(next() % aligns.len() as u64) as usize];
                let layout = Layout::from_size_align(size, align).expect("layout");
                let fill = (step % 251) as u8 + 1;
                let zeroed = roll % 5 == 0;
                // SAFETY: a valid, non-zero layout.
                let ptr = unsafe {
                    if zeroed {
                        pool.alloc_zeroed(layout)
                    } else {
                        pool.alloc(layout)
                    }
                };
                assert!(!ptr.is_null());
                assert_eq!(ptr as usize % align, 0, "alignment {align}");
                if zeroed {
                    check(ptr, size, 0);
                }
                // SAFETY: the block is ours and `size` bytes long.
                unsafe { ptr.write_bytes(fill, size) };
                live.push((ptr, layout, fill));
            } else {
                let i = (next() % live.len() as u64) as usize;
                let (ptr, layout, fill) = live.swap_remove(i);
                check(ptr, layout.size(), fill);
                if roll % 2 == 0 {
                    let new_size = sizes[(next() % sizes.len() as u64) as usize];
                    // SAFETY: the block is live with this layout; the new size is non-zero.
                    let moved = unsafe { pool.realloc(ptr, layout, new_size) };
                    assert!(!moved.is_null());
                    check(moved, layout.size().min(new_size), fill);
                    assert_eq!(moved as usize % layout.align(), 0);
                    let new_layout =
                        Layout::from_size_align(new_size, layout.align()).expect("layout");
                    // SAFETY: the block is ours and `new_size` bytes long.
                    unsafe { moved.write_bytes(fill, new_size) };
                    live.push((moved, new_layout, fill));
                } else {
                    // SAFETY: the block is live with this layout.
                    unsafe { pool.dealloc(ptr, layout) };
                }
            }
            if step % 1_000 == 0 {
                let mut spans: Vec<(usize, usize)> = live
                    .iter()
                    .map(|(p, l, _)| (*p as usize, *p as usize + l.size()))
                    .collect();
                spans.sort_unstable();
                for pair in spans.windows(2) {
                    assert!(pair[0].1 <= pair[1].0, "live blocks overlap: {pair:?}");
                }
                for (ptr, layout, fill) in &live {
                    check(*ptr, layout.size(), *fill);
                }
            }
        }
        for (ptr, layout, fill) in live {
            check(ptr, layout.size(), fill);
            // SAFETY: the block is live with this layout.
            unsafe { pool.dealloc(ptr, layout) };
        }
    }

    #[test]
    fn a_freed_block_is_reused_by_its_class_and_large_blocks_stay_outside() {
        let pool = BlockPool;
        let small = Layout::from_size_align(40, 8).expect("layout");
        // SAFETY: valid layouts; each block is freed with the layout it was taken with.
        unsafe {
            let a = pool.alloc(small);
            assert!(in_region(a));
            pool.dealloc(a, small);
            let b = pool.alloc(Layout::from_size_align(48, 8).expect("layout"));
            assert_eq!(
                a, b,
                "a 48-byte block reuses the freed 40-byte block (same class)"
            );
            pool.dealloc(b, Layout::from_size_align(48, 8).expect("layout"));
            let big = Layout::from_size_align(LARGEST_POOLED + 1, 8).expect("layout");
            let c = pool.alloc(big);
            assert!(!in_region(c));
            pool.dealloc(c, big);
            // The last block cut grows where it is; one cut before it moves.
            let first = Layout::from_size_align(3000, 8).expect("layout");
            let e = pool.alloc(first);
            e.write_bytes(7, 3000);
            let f = pool.alloc(first);
            let grown = pool.realloc(f, first, 9000);
            assert_eq!(f, grown, "the last block cut grows in place");
            let moved = pool.realloc(e, first, 9000);
            assert_ne!(e, moved, "a block with another after it moves");
            assert!(
                std::slice::from_raw_parts(moved, 3000)
                    .iter()
                    .all(|&b| b == 7)
            );
            pool.dealloc(moved, Layout::from_size_align(9000, 8).expect("layout"));
            pool.dealloc(grown, Layout::from_size_align(9000, 8).expect("layout"));
            let aligned = Layout::from_size_align(64, 64).expect("layout");
            let d = pool.alloc(aligned);
            assert!(!in_region(d));
            pool.dealloc(d, aligned);
        }
    }
}
