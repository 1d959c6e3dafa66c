//! What does it look like? Descriptive summary of a [`crate::Study`].
