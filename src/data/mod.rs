//! RV tables: reading, validation, instruments.
