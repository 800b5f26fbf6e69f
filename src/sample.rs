//! The bundled sample scenario (`sample-contacts/`), compiled into the binary so that
//! `hubwatch` with no path works from any folder.

use std::path::PathBuf;

use crate::ingest::Input;

/// People table of the sample.
pub const PEOPLE: &[u8] = include_bytes!("../sample-contacts/people.csv");
/// Exposures table of the sample.
pub const EXPOSURES: &[u8] = include_bytes!("../sample-contacts/exposures.csv");

/// The sample as load inputs.
pub fn inputs() -> Vec<Input> {
    vec![
        Input::Builtin {
            name: PathBuf::from("sample-contacts/people.csv (built in)"),
            bytes: PEOPLE,
        },
        Input::Builtin {
            name: PathBuf::from("sample-contacts/exposures.csv (built in)"),
            bytes: EXPOSURES,
        },
    ]
}
