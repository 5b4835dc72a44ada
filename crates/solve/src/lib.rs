//! tankwave-solve (placeholder overview).
#![deny(missing_docs)]
