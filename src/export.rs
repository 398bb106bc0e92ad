//! placeholder (being written)
