//! What several test modules share: the binary runner, reference
//! contractions written independently of the library, and builders of
//! networks, plans and job directories.

pub mod bin;
pub mod exec;
pub mod formats;
pub mod jobs;
pub mod reference;
pub mod search;
