//! dilata-physics (being written).
