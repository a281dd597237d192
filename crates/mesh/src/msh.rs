//! MSH reader (being written).
