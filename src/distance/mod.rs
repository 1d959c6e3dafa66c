//! Is it clustered, and at what distances? (CSR tests; filled in by the
//! clustering-tests work.)
