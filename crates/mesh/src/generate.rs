//! Mesh generators (being written).
