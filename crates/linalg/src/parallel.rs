//! Explicit thread configuration for the threaded back-ends.

use std::num::NonZeroUsize;

/// How many threads a back-end may use. Passed explicitly so that tests can force one thread.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Parallelism {
    /// Run on the calling thread only.
    #[default]
    Sequential,
    /// Use the global rayon pool. `threads` is the thread count handed to faer (0: the pool's
    /// size); the Krylov matrix–vector product splits rows over the whole global pool unless
    /// `threads == 1`. Results do not depend on the thread count for the Krylov solvers.
    Rayon { threads: usize },
}

impl Parallelism {
    /// The equivalent faer setting.
    pub fn to_faer(self) -> faer::Par {
        match self {
            Parallelism::Sequential => faer::Par::Seq,
            Parallelism::Rayon { threads } => {
                let n = if threads == 0 {
                    rayon::current_num_threads()
                } else {
                    threads
                };
                faer::Par::Rayon(NonZeroUsize::new(n.max(1)).expect("n >= 1"))
            }
        }
    }

    /// True when work may be split across rayon threads.
    pub fn is_parallel(self) -> bool {
        match self {
            Parallelism::Sequential => false,
            Parallelism::Rayon { threads } => threads != 1,
        }
    }
}
