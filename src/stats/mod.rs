//! Infall statistics: the tests users run on the mock hosts. See `docs/methods.md`.

pub mod backsplash;
pub mod battery;
pub mod catalog;
pub mod cells;
pub mod census;
pub mod clocks;
pub mod compact;
pub mod draws;
pub mod intervals;
pub mod pairs;
pub mod sample;

pub use battery::{run_tests, AnalysisResults, DelayLimit, TestOptions};
pub use catalog::Catalog;
pub use census::{census, Companions, HostCensus};
pub use clocks::{
    check_cosmology_indices, clock_times, host_cosmology, Clock, ClockTimes, PreprocessingThreshold,
};
pub use intervals::{spread, Spread};
pub use sample::{ObservedObject, ObservedSample, SampleOptions, SampleRead};
pub use selection::{Selection, Survival};

pub mod selection;
