//! Two pieces of work at once, on the calling thread and one scoped thread.

/// Runs `spawned` on a second thread and `here` on this one, and returns both results, in that
/// order. A panic in either is raised here, as if both had run on this thread.
pub fn both<A: Send, B>(spawned: impl FnOnce() -> A + Send, here: impl FnOnce() -> B) -> (A, B) {
    std::thread::scope(|scope| {
        let spawned = scope.spawn(spawned);
        let here = here();
        (
            spawned
                .join()
                .unwrap_or_else(|e| std::panic::resume_unwind(e)),
            here,
        )
    })
}
