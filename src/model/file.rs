//! serde mirror of the model file (to be written).
