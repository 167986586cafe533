//! How a run reports its progress. The library never prints: the command
//! line implements [`Progress`] (a bar on a terminal, nothing under
//! `--quiet`), and every stage that has progress to report takes one.

/// What a run tells whoever watches it. The library never prints: the
/// command line implements this (a progress bar on a terminal, nothing
/// under `--quiet`); everything has a default that does nothing.
pub trait Progress: Sync {
    /// The run is about to make `forecasts` forecasts in `cells` cells (every
    /// cell kind, combinations included).
    fn begin(&self, _cells: usize, _forecasts: usize) {}
    /// `forecasts` more forecasts are made (the origin loop reports each
    /// origin, so a long cell moves; a cell from the cache reports all of its).
    fn forecasts_done(&self, _forecasts: usize) {}
    /// One more cell finished (computed, formed from its members or taken
    /// from the cache).
    fn cell_done(&self) {}
    /// The computation is over (the bar can go).
    fn end(&self) {}
    /// A step of the run ended `seconds` after it started (developer timing).
    fn step(&self, _step: &str, _seconds: f64) {}
}

/// Progress that shows nothing.
pub struct Silent;
impl Progress for Silent {}
