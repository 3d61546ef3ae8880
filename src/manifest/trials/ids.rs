//! The trial ids of one source, kept to find every id that repeats an earlier one.

use std::hash::BuildHasher;

/// Ids from which [`TrialIds::repeats`] sorts on two threads (fewer are sorted sooner than a
/// thread starts).
const PARALLEL_IDS: usize = 1 << 16;

/// Every trial id of a source, end to end in one buffer. The ids that repeat an earlier one are
/// found once the source is read ([`TrialIds::repeats`]): keys made of a hash of each id and its
/// ordinal are sorted, and ids whose hashes meet are compared byte for byte, so a collision never
/// passes for a repeat and equal ids, always hashed alike, are never missed. Appending is all the
/// per-trial work; a hash table probed per trial costs about one cache miss a trial at a million
/// trials, which was a fifth of the time of the whole check.
///
/// The hash is foldhash, seeded at random per process so that colliding ids cannot be planned; no
/// result depends on the seed.
pub(super) struct TrialIds<S = foldhash::fast::RandomState> {
    bytes: Vec<u8>,
    /// Where each id ends in `bytes` (it starts where the one before ends).
    ends: Vec<u32>,
    hasher: S,
}

impl<S: Default> Default for TrialIds<S> {
    fn default() -> Self {
        TrialIds {
            bytes: Vec::new(),
            ends: Vec::new(),
            hasher: S::default(),
        }
    }
}

impl<S: BuildHasher + Sync> TrialIds<S> {
    /// Makes room for `more` ids of `bytes_each` bytes without growing the buffers.
    pub(super) fn reserve(&mut self, more: usize, bytes_each: usize) {
        self.ends.reserve(more);
        self.bytes.reserve(more.saturating_mul(bytes_each));
    }

    /// Ids kept so far.
    pub(super) fn len(&self) -> usize {
        self.ends.len()
    }

    /// Appends `id` and returns its ordinal; `None` (nothing appended) when the ids would pass
    /// 4 GiB in all, more than any trials source within its size limit holds.
    pub(super) fn push(&mut self, id: &[u8]) -> Option<u32> {
        let ordinal = u32::try_from(self.ends.len()).ok()?;
        let end = u32::try_from(self.bytes.len() + id.len()).ok()?;
        self.bytes.extend_from_slice(id);
        self.ends.push(end);
        Some(ordinal)
    }

    /// Appends the ids `bytes[ends[i - 1]..ends[i]]` (the first from 0), as [`TrialIds::push`]
    /// of each in turn would; false, with nothing appended, when they would pass 4 GiB or
    /// 2^32 ids, or `ends` does not end at the end of `bytes`.
    pub(super) fn append(&mut self, bytes: &[u8], ends: &[usize]) -> bool {
        let before = self.bytes.len();
        let fits = |n: usize| u32::try_from(n).is_ok();
        if ends.last().copied().unwrap_or(0) != bytes.len()
            || !fits(before + bytes.len())
            || !fits(self.ends.len() + ends.len())
        {
            return false;
        }
        self.bytes.extend_from_slice(bytes);
        // Each end fits: the last, the largest, does.
        self.ends.extend(
            ends.iter()
                .map(|&end| u32::try_from(before + end).unwrap_or(u32::MAX)),
        );
        true
    }

    /// Keeps the first `len` ids only.
    pub(super) fn truncate(&mut self, len: usize) {
        self.ends.truncate(len);
        let bytes = self.ends.last().map_or(0, |&end| end as usize);
        self.bytes.truncate(bytes);
    }

    /// The id of `ordinal`.
    pub(super) fn get(&self, ordinal: u32) -> &[u8] {
        let i = ordinal as usize;
        let start = i
            .checked_sub(1)
            .map_or(0, |before| self.ends[before] as usize);
        &self.bytes[start..self.ends[i] as usize]
    }

    /// The ordinals of the ids equal to an earlier id, ascending (the first of equal ids is not
    /// among them).
    ///
    /// Each key holds an id's hash in its high bits and its ordinal in the low bits, so sorting
    /// the keys brings ids of equal hash together in ordinal order. Past [`PARALLEL_IDS`] ids the
    /// keys are split on their top bit and the halves sorted on two threads: ids of equal hash
    /// fall in the same half.
    pub(super) fn repeats(&self) -> Vec<u32> {
        let n = self.ends.len();
        if n < 2 {
            return Vec::new();
        }
        // Ordinals are below 2^bits; bits <= 32, since ordinals are u32.
        let bits = u64::BITS - ((n - 1) as u64).leading_zeros();
        let ordinal_mask = (1u64 << bits) - 1;
        let keys = (0..n).map(|i| {
            let hash = self.hasher.hash_one(self.get(i as u32));
            (hash & !ordinal_mask) | i as u64
        });
        if n < PARALLEL_IDS {
            let mut repeats = self.repeats_among(&mut keys.collect::<Vec<_>>(), ordinal_mask);
            repeats.sort_unstable();
            return repeats;
        }
        let (mut low, mut high): (Vec<u64>, Vec<u64>) = keys.partition(|key| key >> 63 == 0);
        let (more, mut repeats) = crate::parallel::both(
            || self.repeats_among(&mut high, ordinal_mask),
            || self.repeats_among(&mut low, ordinal_mask),
        );
        repeats.extend(more);
        repeats.sort_unstable();
        repeats
    }

    /// The repeats among the ids of `keys` (see [`TrialIds::repeats`]), in no particular order.
    fn repeats_among(&self, keys: &mut [u64], ordinal_mask: u64) -> Vec<u32> {
        keys.sort_unstable();
        let mut repeats = Vec::new();
        let mut group: Vec<u32> = Vec::new();
        for run in keys.chunk_by(|a, b| a & !ordinal_mask == b & !ordinal_mask) {
            if run.len() < 2 {
                continue;
            }
            // Ordinals ascending; the stable sort by bytes keeps equal ids in ordinal order, so
            // of each run of equal ids the first is the original and the rest are repeats.
            group.clear();
            group.extend(run.iter().map(|key| (key & ordinal_mask) as u32));
            group.sort_by(|&a, &b| self.get(a).cmp(self.get(b)));
            repeats.extend(
                group
                    .windows(2)
                    .filter(|pair| self.get(pair[0]) == self.get(pair[1]))
                    .map(|pair| pair[1]),
            );
        }
        repeats
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Every id hashes alike: every pair must be told apart by its bytes.
    #[derive(Default)]
    struct Colliding;

    impl BuildHasher for Colliding {
        type Hasher = Colliding;
        fn build_hasher(&self) -> Colliding {
            Colliding
        }
    }

    impl std::hash::Hasher for Colliding {
        fn finish(&self) -> u64 {
            // The top bit set, so that every key falls in the second half.
            0xF000_0000_0000_0007
        }
        fn write(&mut self, _: &[u8]) {}
    }

    /// The obvious way: the positions at which a set of owned ids already holds the id.
    fn oracle(ids: &[Vec<u8>]) -> Vec<u32> {
        let mut seen = std::collections::HashSet::new();
        (0..ids.len() as u32)
            .filter(|&i| !seen.insert(ids[i as usize].clone()))
            .collect()
    }

    fn ids() -> impl Strategy<Value = Vec<Vec<u8>>> {
        // A small alphabet and short ids, so repeats (and ids that are prefixes of others, and
        // the empty id) are common.
        proptest::collection::vec(proptest::collection::vec(b'a'..=b'c', 0..4), 0..300)
    }

    fn repeats<S: BuildHasher + Default + Sync>(ids: &[Vec<u8>], room: usize) -> Vec<u32> {
        let mut set = TrialIds::<S>::default();
        set.reserve(room, 2);
        for (i, id) in ids.iter().enumerate() {
            assert_eq!(set.push(id), Some(i as u32));
            assert_eq!(set.get(i as u32), &id[..]);
        }
        set.repeats()
    }

    proptest! {
        #[test]
        fn trial_ids_find_exactly_the_repeats(ids in ids(), room in 0usize..300) {
            // Sized ahead (as from a file's size) or not, the answers are the same.
            prop_assert_eq!(repeats::<foldhash::fast::RandomState>(&ids, room), oracle(&ids));
        }

        #[test]
        fn colliding_hashes_are_never_taken_for_repeats(ids in ids()) {
            prop_assert_eq!(repeats::<Colliding>(&ids, 0), oracle(&ids));
        }
    }

    #[test]
    fn one_id_repeated_throughout_is_a_repeat_everywhere_but_first() {
        // Past PARALLEL_IDS, so the two-thread sort is taken too.
        let n = PARALLEL_IDS as u32 + 5000;
        let ids = vec![b"x".to_vec(); n as usize];
        let expected: Vec<u32> = (1..n).collect();
        assert_eq!(repeats::<foldhash::fast::RandomState>(&ids, 0), expected);
        assert_eq!(repeats::<Colliding>(&ids, 0), expected);
    }
}
