//! Which points are near each other?
//!
//! A uniform grid index over points in metres: nearest neighbours and all
//! pairs within a distance, without O(n²) work. Distances use `d ≤ r`.
