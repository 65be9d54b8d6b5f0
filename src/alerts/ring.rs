//! `Ring`: a fixed-capacity ring buffer of `Copy` values, the windows of the alert rules (no allocation).

/// The newest `N` values pushed; pushing onto a full ring drops the oldest.
#[derive(Debug, Clone)]
pub struct Ring<T: Copy + Default, const N: usize> {
    items: [T; N],
    start: usize,
    len: usize,
}

impl<T: Copy + Default, const N: usize> Default for Ring<T, N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<T: Copy + Default, const N: usize> Ring<T, N> {
    /// An empty ring.
    pub fn new() -> Self {
        Self {
            items: [T::default(); N],
            start: 0,
            len: 0,
        }
    }

    /// Most values held.
    pub const fn capacity(&self) -> usize {
        N
    }

    /// Values held.
    pub fn len(&self) -> usize {
        self.len
    }

    /// No values held.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Appends a value, dropping the oldest when full.
    pub fn push(&mut self, value: T) {
        if N == 0 {
            return;
        }
        if self.len < N {
            self.items[(self.start + self.len) % N] = value;
            self.len += 1;
        } else {
            self.items[self.start] = value;
            self.start = (self.start + 1) % N;
        }
    }

    /// The `i`-th value, oldest first.
    pub fn get(&self, i: usize) -> Option<&T> {
        (i < self.len).then(|| &self.items[(self.start + i) % N])
    }

    /// The newest value.
    pub fn last(&self) -> Option<&T> {
        self.len.checked_sub(1).and_then(|i| self.get(i))
    }

    /// The newest value, mutable.
    pub fn last_mut(&mut self) -> Option<&mut T> {
        let i = self.len.checked_sub(1)?;
        Some(&mut self.items[(self.start + i) % N])
    }

    /// Every value, oldest first.
    pub fn iter(&self) -> impl DoubleEndedIterator<Item = &T> + ExactSizeIterator + '_ {
        (0..self.len).map(move |i| &self.items[(self.start + i) % N])
    }

    /// The newest `k` values (all if fewer), oldest first.
    pub fn newest(&self, k: usize) -> impl DoubleEndedIterator<Item = &T> + ExactSizeIterator + '_ {
        let skip = self.len.saturating_sub(k);
        (skip..self.len).map(move |i| &self.items[(self.start + i) % N])
    }

    /// Forgets every value.
    pub fn clear(&mut self) {
        self.start = 0;
        self.len = 0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keeps_the_newest_values_in_order() {
        let mut ring: Ring<u32, 4> = Ring::new();
        assert!(ring.is_empty());
        assert_eq!(ring.last(), None);
        for v in 1..=6 {
            ring.push(v);
        }
        assert_eq!(ring.len(), 4);
        assert_eq!(ring.iter().copied().collect::<Vec<_>>(), vec![3, 4, 5, 6]);
        assert_eq!(ring.newest(2).copied().collect::<Vec<_>>(), vec![5, 6]);
        assert_eq!(ring.newest(9).count(), 4);
        assert_eq!(ring.get(0), Some(&3));
        assert_eq!(ring.get(4), None);
        *ring.last_mut().unwrap() = 60;
        assert_eq!(ring.last(), Some(&60));
        ring.clear();
        assert_eq!(ring.len(), 0);
    }
}
