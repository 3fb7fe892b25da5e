//! Knowing when the editor's window threads have really ended.
//!
//! On X11 the editor window runs on a thread of its own (baseview). When the
//! host closes the editor (CLAP `gui.destroy`), baseview 0.4.2 asks that
//! thread to stop and means to join it, but returns early when the thread
//! has already dropped its reply channel, while the thread is still tearing
//! down its OpenGL display. A host that then destroys the plugin and
//! unloads the library, or exits, pulls code and libGL state from under
//! that thread: seen here as a crash in Mesa's teardown (`__cxa_finalize`
//! in `swrast_dri.so`, called from `eglTerminate` on the window thread)
//! racing the process's exit handlers.
//!
//! So each window thread marks itself here when its window is built, with a
//! thread-local guard that is dropped only when the thread itself ends,
//! after all of baseview's teardown; and the plugin, when the host destroys
//! it, waits (bounded) until every window thread it started has ended.

use parking_lot::{Condvar, Mutex};
use std::cell::RefCell;
use std::sync::Arc;
use std::time::{Duration, Instant};

/// Window threads of one plugin instance that are still running.
#[derive(Debug, Default)]
pub struct WindowThreads {
    live: Mutex<usize>,
    ended: Condvar,
}

/// Dropped when its thread ends (thread-local destructors run after the
/// thread's function has returned and dropped everything it owned).
struct EndsWithThread(Arc<WindowThreads>);

impl Drop for EndsWithThread {
    fn drop(&mut self) {
        *self.0.live.lock() -= 1;
        self.0.ended.notify_all();
    }
}

thread_local! {
    static MARK: RefCell<Option<EndsWithThread>> = const { RefCell::new(None) };
}

impl WindowThreads {
    /// Called on a window thread when its window is built. Counting the
    /// same thread twice is avoided: a thread holds one mark.
    pub fn enter(self: &Arc<Self>) {
        MARK.with(|mark| {
            let mut mark = mark.borrow_mut();
            if mark.is_none() {
                *self.live.lock() += 1;
                *mark = Some(EndsWithThread(self.clone()));
            }
        });
    }

    /// Window threads still running.
    pub fn live(&self) -> usize {
        *self.live.lock()
    }

    /// Waits until no window thread is running, at most `limit` (a host
    /// must never hang on us). Returns whether they all ended.
    pub fn wait_until_ended(&self, limit: Duration) -> bool {
        let deadline = Instant::now() + limit;
        let mut live = self.live.lock();
        while *live > 0 {
            if self.ended.wait_until(&mut live, deadline).timed_out() {
                return *live == 0;
            }
        }
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_marked_thread_is_waited_for_until_it_has_ended() {
        let threads = Arc::new(WindowThreads::default());
        let (go, wait) = std::sync::mpsc::channel::<()>();
        let t = {
            let threads = threads.clone();
            std::thread::spawn(move || {
                threads.enter();
                threads.enter();
                wait.recv().unwrap();
            })
        };
        while threads.live() == 0 {
            std::thread::yield_now();
        }
        assert_eq!(threads.live(), 1, "one mark per thread");
        assert!(
            !threads.wait_until_ended(Duration::from_millis(20)),
            "a running thread is not reported as ended"
        );
        go.send(()).unwrap();
        assert!(threads.wait_until_ended(Duration::from_secs(10)));
        assert_eq!(threads.live(), 0);
        t.join().unwrap();
    }

    #[test]
    fn with_no_window_there_is_nothing_to_wait_for() {
        assert!(WindowThreads::default().wait_until_ended(Duration::ZERO));
    }
}
