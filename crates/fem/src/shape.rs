//! Shape functions (being written).
