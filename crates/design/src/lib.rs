//! tankwave-design (placeholder overview).
#![deny(missing_docs)]
