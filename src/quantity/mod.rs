//! Quantities as engineers write them: parsing engineering notation into SI
//! values, and printing SI values with prefixes and units.

mod dimension;
mod format;
mod parse;

pub use dimension::Dimension;
pub use format::{
    format_db, format_fraction, format_plain, format_quantity, format_share, format_si,
};
pub use parse::{parse_quantity, AmplitudeForm, Quantity, QuantityError, SpreadShape};
