//! tankwave-study (placeholder overview).
#![deny(missing_docs)]
