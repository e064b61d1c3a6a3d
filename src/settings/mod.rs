//! The job's settings on their way from a person to the numeric core: unit
//! types (percent as typed and read, coverage fractions inside), the one
//! table of allowed ranges with one error wording for every origin (a flag,
//! a ticket key, a condition file key), the black generation settings a
//! condition carries, and the one echo of those settings in percent.
//!
//! It sits below `press` (a printing condition carries default black
//! generation and checks its file through the same ranges) and knows nothing
//! of the command line; `setup` merges condition, ticket and flags through it
//! into a ready job.

mod black;
mod echo;
mod ranges;
mod units;

pub use black::BlackGeneration;
pub use echo::InkEcho;
pub use ranges::{Origin, Range, Setting};
pub use units::{Coverage, Percent};
