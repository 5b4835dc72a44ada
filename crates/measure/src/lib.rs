//! tankwave-measure (placeholder overview).
#![deny(missing_docs)]
