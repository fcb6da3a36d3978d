//! Opening a plan and the network it was made for, with errors that name
//! the plan file, the network file and the way out when the network moved.

use std::path::Path;

use crate::error::{Error, Result};
use crate::formats::{self, LoadOptions};
use crate::network::Network;
use crate::plan::{read_plan, Plan};

/// Reads the plan at `path` and its network (`network` when given, else
/// the path the plan records), and checks that they belong together.
pub fn open_plan(path: &Path, network: Option<&Path>) -> Result<(Plan, Network)> {
    let plan = read_plan(path)?;
    let net_path = network
        .map(Path::to_path_buf)
        .unwrap_or_else(|| plan.network_path_from(path));
    let net = formats::load(&net_path, &LoadOptions::default()).map_err(|e| match e {
        Error::Io { .. } if network.is_none() => Error::invalid(
            "network",
            format!(
                "{e}; the plan {} refers to this network file; if it has moved, give its new path",
                path.display()
            ),
        ),
        other => other,
    })?;
    plan.check_against(&net).map_err(|e| {
        // A side file that changed or broke since planning changes the
        // fingerprint; name the file rather than the fingerprints.
        if let Err(values) = crate::network::values::check_value_files(&net) {
            return values;
        }
        // The plan's own checks name it "plan"; name the file instead.
        let reason = match &e {
            Error::Input { location, message } if location.source == "plan" => message.clone(),
            other => other.to_string(),
        };
        Error::in_source(
            path.display().to_string(),
            format!("does not fit network {}: {reason}", net_path.display()),
        )
    })?;
    Ok((plan, net))
}
