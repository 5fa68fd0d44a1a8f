//! A buffer several parallel tasks write at once, each at its own positions: the one shape of
//! shared mutable access the gridder needs beyond what slices can split (sorted samples write
//! scattered output places; column tasks write scattered grid columns).

/// A buffer that several tasks write at once, each only at positions no other task touches
/// during the parallel loop (the callers below say why, case by case).
pub(crate) struct Disjoint<'a, T> {
    ptr: *mut T,
    len: usize,
    _buffer: std::marker::PhantomData<&'a mut [T]>,
}

// SAFETY: handing the pointer to other threads is sound because every access goes through
// `Disjoint::slot`, whose callers guarantee that no two threads touch one position.
unsafe impl<T: Send> Sync for Disjoint<'_, T> {}

impl<'a, T> Disjoint<'a, T> {
    pub(crate) fn new(buffer: &'a mut [T]) -> Self {
        Self { ptr: buffer.as_mut_ptr(), len: buffer.len(), _buffer: std::marker::PhantomData }
    }

    /// Hint the CPU to fetch position `at` (no access; any `at`).
    #[inline(always)]
    pub(crate) fn prefetch(&self, at: usize) {
        #[cfg(target_arch = "x86_64")]
        // SAFETY: _mm_prefetch (SSE, always present on x86-64) does not access the memory and
        // never faults, whatever the address.
        unsafe {
            use std::arch::x86_64::{_mm_prefetch, _MM_HINT_T0};
            _mm_prefetch::<_MM_HINT_T0>(self.ptr.wrapping_add(at).cast());
        }
        #[cfg(not(target_arch = "x86_64"))]
        let _ = at;
    }

    /// The value at `at` (checked against the length).
    ///
    /// # Safety
    /// While the returned reference lives, no other thread may access position `at`.
    #[inline(always)]
    #[allow(clippy::mut_from_ref)]
    pub(crate) unsafe fn slot(&self, at: usize) -> &mut T {
        assert!(at < self.len, "position {at} outside a buffer of {}", self.len);
        // SAFETY: `at` is inside the buffer, which the borrow `'a` keeps alive and unaliased
        // outside this type; exclusive access to the position is the caller's promise.
        unsafe { &mut *self.ptr.add(at) }
    }
}

impl Disjoint<'_, num_complex::Complex64> {
    /// Writes `value` at `at` past the caches (a non-temporal store) where the CPU has one and
    /// the position is 16-byte aligned, else as a plain write; call [`Self::fence`] before the
    /// task ends so that such writes are ordered before whatever reads them next.
    ///
    /// # Safety
    /// No other thread may access position `at` during the parallel loop.
    #[inline(always)]
    pub(crate) unsafe fn write_streaming(&self, at: usize, value: num_complex::Complex64) {
        // SAFETY: exclusive access to `at` is the caller's promise; `slot` checks the bounds.
        let slot = unsafe { self.slot(at) };
        #[cfg(target_arch = "x86_64")]
        if (slot as *mut num_complex::Complex64 as usize).is_multiple_of(16) {
            // SAFETY: SSE2 is part of x86-64; the address is 16-byte aligned (checked) and
            // holds two f64 (re, im) that the caller alone accesses.
            unsafe {
                use std::arch::x86_64::{_mm_set_pd, _mm_stream_pd};
                let p = slot as *mut num_complex::Complex64 as *mut f64;
                _mm_stream_pd(p, _mm_set_pd(value.im, value.re));
            }
            return;
        }
        *slot = value;
    }

    /// Orders this thread's earlier [`Self::write_streaming`] stores before its later ones.
    #[inline(always)]
    pub(crate) fn fence(&self) {
        #[cfg(target_arch = "x86_64")]
        // SAFETY: SSE is part of x86-64; a store fence has no other effect.
        unsafe {
            std::arch::x86_64::_mm_sfence()
        };
    }
}
