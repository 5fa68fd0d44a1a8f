//! Padded grids kept between the calls of one operator ([`crate::GridPlan`],
//! [`crate::KernelAProjection`]).
//!
//! Each grid or degrid call needs one padded grid per image (a window of W w-plane grids per
//! image for A-projection: hundreds of MB at realistic sizes). Allocating them afresh every call
//! made the kernel map and zero every page again: about a fifth of an A-projection run's time
//! went to page faults and page clearing. The pool hands out buffers of the requested length
//! that are all zero, reusing returned ones; an operator keeps one for its major cycles.
use num_complex::Complex64;
use std::sync::Mutex;

/// Returned buffers, each with whether it is known to be all zero.
#[derive(Debug, Default)]
pub(crate) struct GridPool {
    free: Mutex<Vec<(Vec<Complex64>, bool)>>,
}

impl GridPool {
    /// `count` all-zero buffers of `len` values: reused ones first (zeroed here unless they
    /// came back zero), then fresh ones.
    pub fn take(&self, count: usize, len: usize) -> Vec<Vec<Complex64>> {
        let mut reused = Vec::with_capacity(count);
        {
            let mut free = self.free.lock().unwrap_or_else(|e| e.into_inner());
            // Clean buffers first, so fewer need zeroing.
            free.sort_by_key(|(_, clean)| *clean);
            while reused.len() < count {
                match free.iter().rposition(|(b, _)| b.len() == len) {
                    Some(i) => reused.push(free.swap_remove(i)),
                    None => break,
                }
            }
        }
        let mut out: Vec<Vec<Complex64>> = reused
            .into_iter()
            .map(|(mut b, clean)| {
                if !clean {
                    b.fill(Complex64::new(0.0, 0.0));
                }
                b
            })
            .collect();
        out.resize_with(count, || fresh_grid(len));
        out
    }

    /// `count` buffers of `len` values whose contents are unspecified (stale values of earlier
    /// calls), for callers that write every value they later read.
    pub fn take_any(&self, count: usize, len: usize) -> Vec<Vec<Complex64>> {
        let mut out = Vec::with_capacity(count);
        {
            let mut free = self.free.lock().unwrap_or_else(|e| e.into_inner());
            // Dirty buffers first, so clean ones stay for `take`.
            free.sort_by_key(|(_, clean)| !*clean);
            while out.len() < count {
                match free.iter().rposition(|(b, _)| b.len() == len) {
                    Some(i) => out.push(free.swap_remove(i).0),
                    None => break,
                }
            }
        }
        out.resize_with(count, || fresh_grid(len));
        out
    }

    /// Return buffers; `zero` says the caller left every one of them all zero.
    pub fn give_back(&self, buffers: Vec<Vec<Complex64>>, zero: bool) {
        let mut free = self.free.lock().unwrap_or_else(|e| e.into_inner());
        free.extend(buffers.into_iter().map(|b| (b, zero)));
    }
}

/// A new all-zero buffer of `len` values, on 2 MiB pages where the system allows it.
///
/// A grid is hundreds of MB at realistic sizes; on 4 KiB pages its first touch costs one page
/// fault per 4 KiB (half a million for the A-projection rings), several times the cost of
/// clearing the memory itself. Huge pages cut that to one fault per 2 MiB. The values are the
/// same either way: this only advises the kernel about the buffer's pages.
///
/// The buffer comes zeroed from the allocator: a large one is fresh memory from the system,
/// which is zero already, so it is not written here at all, and pages the caller never touches
/// (the grid rows no sample reaches) are never mapped.
pub(crate) fn fresh_grid(len: usize) -> Vec<Complex64> {
    fresh_zeroed(len)
}

/// Types whose all-zero bytes are a valid value (zero).
///
/// # Safety
/// Implement only for types where every all-zero bit pattern is a valid value.
pub(crate) unsafe trait ZeroBits: Copy {}
// SAFETY: all-zero bytes are the integer 0.
unsafe impl ZeroBits for usize {}
// SAFETY: all-zero bytes are 0.0 + 0.0i.
unsafe impl ZeroBits for Complex64 {}

/// A new all-zero buffer of `len` values on 2 MiB pages where the system allows it (see
/// [`fresh_grid`]).
pub(crate) fn fresh_zeroed<T: ZeroBits>(len: usize) -> Vec<T> {
    let bytes = len * std::mem::size_of::<T>();
    if bytes == 0 {
        return Vec::new();
    }
    let layout = std::alloc::Layout::array::<T>(len).expect("buffer size fits in memory");
    // SAFETY: the layout has a non-zero size (checked above).
    let ptr = unsafe { std::alloc::alloc_zeroed(layout) }.cast::<T>();
    if ptr.is_null() {
        std::alloc::handle_alloc_error(layout);
    }
    advise_huge_pages(ptr.cast(), bytes);
    // SAFETY: `ptr` was allocated by the global allocator with the layout of `len` values of T
    // (so capacity `len`), and all-zero bytes are a valid T (`ZeroBits`), so all `len` values
    // are initialised.
    unsafe { Vec::from_raw_parts(ptr, len, len) }
}

/// Asks the kernel to back the whole 2 MiB pages inside `[start, start + bytes)` with
/// transparent huge pages (Linux `madvise(MADV_HUGEPAGE)`; a no-op elsewhere, for buffers under
/// 4 MiB, or when the system has them switched off).
fn advise_huge_pages(start: *mut u8, bytes: usize) {
    const HUGE_PAGE: usize = 2 << 20;
    if bytes < 2 * HUGE_PAGE {
        return;
    }
    let (first, end) = ((start as usize).next_multiple_of(HUGE_PAGE), start as usize + bytes);
    let last = end / HUGE_PAGE * HUGE_PAGE;
    if last <= first {
        return;
    }
    #[cfg(target_os = "linux")]
    // SAFETY: [first, last) lies inside the allocation of `bytes` bytes at `start`, which the
    // caller owns; MADV_HUGEPAGE only changes how the kernel backs those pages (their contents
    // and validity are unchanged), and its result is advisory, so a failure is ignored.
    unsafe {
        libc::madvise(first as *mut libc::c_void, last - first, libc::MADV_HUGEPAGE);
    }
    #[cfg(not(target_os = "linux"))]
    let _ = (first, last);
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Reused buffers come back zero whether or not they were returned zero, and a length
    /// that was never returned is freshly allocated.
    #[test]
    fn buffers_are_zero_and_reused() {
        let pool = GridPool::default();
        let mut a = pool.take(2, 8);
        assert!(a.iter().all(|b| b.len() == 8 && b.iter().all(|v| v.norm() == 0.0)));
        a[0][3] = Complex64::new(1.0, 2.0);
        let ptrs: Vec<*const Complex64> = a.iter().map(|b| b.as_ptr()).collect();
        pool.give_back(a, false);
        let b = pool.take(3, 8);
        assert_eq!(b.len(), 3);
        assert!(b.iter().all(|v| v.iter().all(|x| x.norm() == 0.0)));
        let reused = b.iter().filter(|v| ptrs.contains(&v.as_ptr())).count();
        assert_eq!(reused, 2);
        let c = pool.take(1, 5);
        assert_eq!(c[0].len(), 5);
        pool.give_back(b, true);
        assert_eq!(pool.take_any(4, 8).len(), 4);
    }
}
