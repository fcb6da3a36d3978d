//! Memory accounting: meters that count the bytes the executor holds, buffers
//! that report to them while alive, and the process's maximum resident size.
//!
//! Every buffer the contraction allocates (sliced copies, permuted operand
//! copies, intermediates, the final permuted result) is a [`Held`] registered
//! with the slice's [`Meter`]; the meter keeps the current and the highest
//! byte count. Meters chain to a parent, so one process-wide meter sees the
//! sum over slices running at once plus the shared input tensors.

use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;

/// Counts bytes held now and the most ever held.
#[derive(Debug, Default)]
pub struct Meter {
    current: AtomicU64,
    peak: AtomicU64,
    parent: Option<Arc<Meter>>,
}

impl Meter {
    /// A meter with no parent.
    pub fn new() -> Arc<Meter> {
        Arc::new(Meter::default())
    }

    /// A meter whose counts also go to `parent`.
    pub fn child(parent: &Arc<Meter>) -> Arc<Meter> {
        Arc::new(Meter {
            parent: Some(Arc::clone(parent)),
            ..Meter::default()
        })
    }

    /// Records `bytes` more held.
    pub fn acquire(&self, bytes: u64) {
        let now = self.current.fetch_add(bytes, Ordering::SeqCst) + bytes;
        self.peak.fetch_max(now, Ordering::SeqCst);
        if let Some(p) = &self.parent {
            p.acquire(bytes);
        }
    }

    /// Records `bytes` released.
    pub fn release(&self, bytes: u64) {
        self.current.fetch_sub(bytes, Ordering::SeqCst);
        if let Some(p) = &self.parent {
            p.release(bytes);
        }
    }

    /// Bytes held now.
    pub fn current(&self) -> u64 {
        self.current.load(Ordering::SeqCst)
    }

    /// The most bytes held at once so far.
    pub fn peak(&self) -> u64 {
        self.peak.load(Ordering::SeqCst)
    }
}

/// A buffer whose bytes count on a meter from allocation to drop.
#[derive(Debug)]
pub struct Held<T> {
    data: Vec<T>,
    meter: Arc<Meter>,
}

/// Element types for which the all-zero bit pattern is a valid value (zero).
///
/// # Safety
///
/// Implement only for types where every byte being 0 is a valid value, as
/// for the IEEE floats and pairs of them.
pub unsafe trait ZeroBits: Copy {}

// SAFETY: 0 bits are +0.0 for IEEE floats, and (0.0, 0.0) for complex pairs.
unsafe impl ZeroBits for f32 {}
unsafe impl ZeroBits for f64 {}
unsafe impl ZeroBits for num_complex::Complex32 {}
unsafe impl ZeroBits for num_complex::Complex64 {}

impl<T: ZeroBits> Held<T> {
    /// `len` zero elements, counted on `meter` before they are allocated.
    ///
    /// The memory comes zeroed from the allocator (fresh pages from the
    /// kernel for large sizes), so nothing is written until the caller
    /// writes; large buffers are advised to use huge pages first.
    pub fn zeroed(len: usize, meter: &Arc<Meter>) -> Held<T> {
        meter.acquire(bytes_of::<T>(len));
        let layout =
            std::alloc::Layout::array::<T>(len).expect("buffer size fits the address space");
        let data = if layout.size() == 0 {
            Vec::new()
        } else {
            // SAFETY: the layout has non-zero size; the memory is zeroed,
            // which is a valid T (ZeroBits), and Vec frees it with the same
            // layout (its element type's size and alignment, capacity len).
            unsafe {
                let ptr = std::alloc::alloc_zeroed(layout);
                if ptr.is_null() {
                    std::alloc::handle_alloc_error(layout);
                }
                advise_huge_pages(ptr, layout.size());
                Vec::from_raw_parts(ptr.cast::<T>(), len, len)
            }
        };
        Held {
            data,
            meter: Arc::clone(meter),
        }
    }
}

impl<T: Copy> Held<T> {
    /// Takes ownership of `data`, counting it on `meter`.
    pub fn adopt(data: Vec<T>, meter: &Arc<Meter>) -> Held<T> {
        meter.acquire(bytes_of::<T>(data.len()));
        Held {
            data,
            meter: Arc::clone(meter),
        }
    }

    /// The elements.
    pub fn as_slice(&self) -> &[T] {
        &self.data
    }

    /// The elements, mutably.
    pub fn as_mut_slice(&mut self) -> &mut [T] {
        &mut self.data
    }

    /// Bytes counted for this buffer.
    pub fn bytes(&self) -> u64 {
        bytes_of::<T>(self.data.len())
    }
}

impl<T> Drop for Held<T> {
    fn drop(&mut self) {
        self.meter
            .release((self.data.len() * std::mem::size_of::<T>()) as u64);
    }
}

fn bytes_of<T>(len: usize) -> u64 {
    (len as u64).saturating_mul(std::mem::size_of::<T>() as u64)
}

/// Asks the kernel to back a large, not yet touched allocation with 2 MiB
/// pages: one page fault per 2 MiB instead of per 4 KiB when it is first
/// written. Only the 2 MiB-aligned interior is advised; the contents and the
/// resident size of the buffer are unchanged.
fn advise_huge_pages(ptr: *mut u8, bytes: usize) {
    const HUGE: usize = 2 << 20;
    if bytes < 4 * HUGE {
        return;
    }
    let start = (ptr as usize).div_ceil(HUGE) * HUGE;
    let end = (ptr as usize + bytes) / HUGE * HUGE;
    #[cfg(target_os = "linux")]
    if end > start {
        // SAFETY: the range lies inside an allocation this process owns;
        // MADV_HUGEPAGE changes how pages are backed, never their contents.
        unsafe {
            libc::madvise(start as *mut libc::c_void, end - start, libc::MADV_HUGEPAGE);
        }
    }
    #[cfg(not(target_os = "linux"))]
    let _ = (start, end);
}

/// The process's maximum resident set size so far, in bytes (`VmHWM` in
/// `/proc/self/status`; `None` where that file does not exist).
pub fn max_resident_bytes() -> Option<u64> {
    status_field("VmHWM:")
}

/// The process's current resident set size, in bytes (`VmRSS`).
pub fn resident_bytes() -> Option<u64> {
    status_field("VmRSS:")
}

fn status_field(key: &str) -> Option<u64> {
    let text = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = text.lines().find(|l| l.starts_with(key))?;
    let mut parts = line[key.len()..].split_whitespace();
    let value: u64 = parts.next()?.parse().ok()?;
    match parts.next() {
        Some("kB") => Some(value * 1024),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn meters_count_and_chain() {
        let process = Meter::new();
        let slice = Meter::child(&process);
        let a: Held<f64> = Held::zeroed(100, &slice);
        {
            // 100 + 50 f64 = 1200 bytes at the highest point.
            let _b: Held<f64> = Held::zeroed(50, &slice);
            assert_eq!(slice.current(), 1200);
        }
        assert_eq!(slice.current(), 800);
        assert_eq!(slice.peak(), 1200);
        drop(a);
        assert_eq!((slice.current(), process.current()), (0, 0));
        assert_eq!(process.peak(), 1200);
    }

    #[test]
    fn resident_size_is_read() {
        // Linux reports both fields in kB; a running test process holds some
        // memory, and the high-water mark read later is at least the size
        // read earlier (other tests run in parallel threads).
        let rss = resident_bytes().expect("VmRSS on Linux");
        let hwm = max_resident_bytes().expect("VmHWM on Linux");
        assert!(hwm >= rss && rss > 0);
    }
}
