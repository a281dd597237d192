//! Quadrature (being written).
