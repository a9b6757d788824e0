//! Input files → validated structs (in progress).
