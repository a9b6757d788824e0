//! Command-line layer (in progress).
