//! dilata-material (being written).
