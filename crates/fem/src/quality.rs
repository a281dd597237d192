//! Mesh quality (being written).
