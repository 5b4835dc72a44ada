//! tankwave-report (placeholder overview).
#![deny(missing_docs)]
