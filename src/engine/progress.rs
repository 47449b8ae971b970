//! How the engine reports progress without printing: it calls a [`Progress`] and the command
//! line decides whether that becomes bars on stderr, nothing, or a record for a test.

use std::sync::Mutex;

/// Receives a stage's counters and their advances. Implementations must be thread-safe: the
/// engine may call `advance` from worker threads (it does so once per chunk, not per item).
pub trait Progress: Sync {
    /// A stage starts with named counters and their totals.
    fn begin(&self, stage: &str, counters: &[(&str, u64)]);
    /// Counter `counter` (an index into the last `begin`) moved by `n`.
    fn advance(&self, counter: usize, n: u64);
    fn finish(&self);
}

/// Reports nowhere.
pub struct Silent;

impl Progress for Silent {
    fn begin(&self, _: &str, _: &[(&str, u64)]) {}
    fn advance(&self, _: usize, _: u64) {}
    fn finish(&self) {}
}

/// Keeps what it is told, for tests: (counter name, total, done).
#[derive(Default)]
pub struct Recorded {
    pub counters: Mutex<Vec<(String, u64, u64)>>,
}

impl Progress for Recorded {
    fn begin(&self, stage: &str, counters: &[(&str, u64)]) {
        let mut c = self.counters.lock().expect("progress lock");
        c.clear();
        for (name, total) in counters {
            c.push((format!("{stage}/{name}"), *total, 0));
        }
    }

    fn advance(&self, counter: usize, n: u64) {
        self.counters.lock().expect("progress lock")[counter].2 += n;
    }

    fn finish(&self) {}
}

/// Bars on stderr with count, rate and ETA, one per counter.
pub struct Bars {
    visible: bool,
    multi: indicatif::MultiProgress,
    bars: Mutex<Vec<indicatif::ProgressBar>>,
}

impl Bars {
    /// Bars, hidden when `quiet` or when stderr is not a terminal.
    pub fn new(quiet: bool) -> Self {
        use std::io::IsTerminal;
        Bars {
            visible: !quiet && std::io::stderr().is_terminal(),
            multi: indicatif::MultiProgress::new(),
            bars: Mutex::new(Vec::new()),
        }
    }
}

impl Progress for Bars {
    fn begin(&self, stage: &str, counters: &[(&str, u64)]) {
        if !self.visible {
            return;
        }
        let style = indicatif::ProgressStyle::with_template(
            "{prefix:>24} [{bar:30}] {pos}/{len} ({per_sec}, eta {eta})",
        )
        .expect("valid template")
        .progress_chars("=> ");
        let mut bars = self.bars.lock().expect("progress lock");
        for old in bars.drain(..) {
            old.finish_and_clear();
        }
        for (name, total) in counters {
            let bar = self.multi.add(indicatif::ProgressBar::new(*total));
            bar.set_style(style.clone());
            bar.set_prefix(format!("{stage}: {name}"));
            bars.push(bar);
        }
    }

    fn advance(&self, counter: usize, n: u64) {
        if let Some(bar) = self.bars.lock().expect("progress lock").get(counter) {
            bar.inc(n);
        }
    }

    fn finish(&self) {
        for bar in self.bars.lock().expect("progress lock").drain(..) {
            bar.finish_and_clear();
        }
    }
}
