//! Output writers (in progress).
