//! RON run files → typed settings (serde; unknown keys are errors).
