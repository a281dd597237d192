//! dilata-io (being written).
