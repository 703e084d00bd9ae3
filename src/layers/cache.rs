//! A thread-safe cache of parsed (and projected) source files, so each file is read once per run
//! however many layers use it.

use super::{LayerError, SamplingReport};
use std::any::Any;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex, MutexGuard};

type Slot = Arc<Mutex<Option<Arc<dyn Any + Send + Sync>>>>;

/// Parsed source files keyed by path (and by how they were prepared, e.g. projected into a
/// grid's CRS). Share one `&SourceCache` between threads: each entry is built once; a thread
/// asking for an entry another thread is building waits for it. Failures are not cached, so
/// a retry reads the file again.
#[derive(Default)]
pub struct SourceCache {
    slots: Mutex<BTreeMap<(PathBuf, String), Slot>>,
    /// How each point-lattice layer was sampled, by layer name (later samplings of the same
    /// name replace earlier ones).
    reports: Mutex<BTreeMap<String, SamplingReport>>,
}

impl std::fmt::Debug for SourceCache {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("SourceCache")
            .field("entries", &self.len())
            .finish()
    }
}

/// A poisoned lock only means another thread panicked while holding it; the map itself is
/// still consistent (entries are inserted whole), so carry on with it.
fn lock<T>(m: &Mutex<T>) -> MutexGuard<'_, T> {
    m.lock().unwrap_or_else(|e| e.into_inner())
}

impl SourceCache {
    /// An empty cache.
    pub fn new() -> SourceCache {
        SourceCache::default()
    }

    /// Number of entries built so far (a file parsed and the same file projected count twice).
    pub fn len(&self) -> usize {
        lock(&self.slots)
            .values()
            .filter(|s| lock(s).is_some())
            .count()
    }

    /// True when nothing has been cached yet.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Records how a layer was sampled.
    pub(crate) fn record(&self, report: SamplingReport) {
        lock(&self.reports).insert(report.layer.clone(), report);
    }

    /// How each point-lattice layer sampled through this cache was formed, by layer name.
    pub fn sampling_reports(&self) -> Vec<SamplingReport> {
        lock(&self.reports).values().cloned().collect()
    }

    /// The entry for `(path, kind)`, built with `load` on first use.
    pub(crate) fn get_or_load<T, F>(
        &self,
        path: &Path,
        kind: &str,
        load: F,
    ) -> Result<Arc<T>, LayerError>
    where
        T: Any + Send + Sync,
        F: FnOnce() -> Result<T, LayerError>,
    {
        let slot = {
            let mut slots = lock(&self.slots);
            slots
                .entry((path.to_path_buf(), kind.to_string()))
                .or_default()
                .clone()
        };
        // Only this entry is locked while loading, so other files load in parallel.
        let mut guard = lock(&slot);
        if let Some(any) = guard.as_ref() {
            if let Ok(v) = any.clone().downcast::<T>() {
                return Ok(v);
            }
        }
        let value = Arc::new(load()?);
        *guard = Some(value.clone());
        Ok(value)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::{AtomicUsize, Ordering};

    #[test]
    fn loads_each_entry_once_across_threads() {
        let cache = SourceCache::new();
        let loads = AtomicUsize::new(0);
        std::thread::scope(|s| {
            for _ in 0..8 {
                s.spawn(|| {
                    let v = cache
                        .get_or_load(Path::new("a.csv"), "csv", || {
                            loads.fetch_add(1, Ordering::SeqCst);
                            Ok(42u32)
                        })
                        .unwrap();
                    assert_eq!(*v, 42);
                });
            }
        });
        assert_eq!(loads.load(Ordering::SeqCst), 1);
        let other = cache
            .get_or_load(Path::new("a.csv"), "projected", || Ok(String::from("x")))
            .unwrap();
        assert_eq!(*other, "x");
        assert_eq!(cache.len(), 2);
    }

    #[test]
    fn failures_are_not_cached() {
        let cache = SourceCache::new();
        let r: Result<Arc<u8>, _> = cache.get_or_load(Path::new("b"), "k", || {
            Err(LayerError::Spec {
                path: "b".into(),
                message: "bad".into(),
            })
        });
        assert!(r.is_err());
        assert!(cache.is_empty());
        assert_eq!(
            *cache.get_or_load(Path::new("b"), "k", || Ok(7u8)).unwrap(),
            7
        );
    }
}
