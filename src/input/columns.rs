//! Detects column roles from header names.
