//! dilata-solve (being written).
