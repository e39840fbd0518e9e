//! Baselines (recording, loading, drift comparison) and the content-hash cache.
