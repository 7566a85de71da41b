//! Results into caller-supplied buffers: the [`Listing`] every list function returns,
//! and the one sorted-insertion routine they share.
//!
//! ```
//! use matterwave_core::listing::insert_sorted;
//! let mut buf = [0i32; 3];
//! let mut n = 0;
//! let mut dropped = false;
//! for x in [5, 1, 4, 2] {
//!     dropped |= insert_sorted(&mut buf, &mut n, x, |a, b| a < b);
//! }
//! assert_eq!((buf, n, dropped), ([1, 2, 4], 3, true)); // 5 fell off the end
//! ```

/// How many results a listing stored, and whether any were dropped.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Listing {
    /// Results written to the front of the buffer.
    pub stored: usize,
    /// Whether results were dropped for lack of room (the stored ones are then the
    /// first in the listing's order).
    pub truncated: bool,
}

impl Listing {
    /// True when every result fitted.
    pub const fn complete(&self) -> bool {
        !self.truncated
    }
}

/// Inserts `item` into `out[..*stored]`, which is kept in the order `before` defines
/// (items that compare equal keep their arrival order). When the buffer is full the
/// last item falls off. Returns true when an item was dropped (`item` itself or the
/// previous last one).
pub fn insert_sorted<T: Copy>(
    out: &mut [T],
    stored: &mut usize,
    item: T,
    before: impl Fn(&T, &T) -> bool,
) -> bool {
    let n = (*stored).min(out.len());
    let Some(kept) = out.get(..n) else {
        return true;
    };
    // Insertion point: after every stored item that `item` does not sort before.
    let pos = kept
        .iter()
        .rposition(|x| !before(&item, x))
        .map_or(0, |i| i + 1);
    if pos == out.len() {
        return true;
    }
    let full = n == out.len();
    let end = if full { n } else { n + 1 };
    // Shift out[pos..end-1] one place right (the last one falls off when full), then
    // put the item at `pos`.
    if let Some(window) = out.get_mut(pos..end) {
        window.rotate_right(1);
        if let Some(first) = window.first_mut() {
            *first = item;
        }
    }
    if !full {
        *stored = n + 1;
    }
    full
}
