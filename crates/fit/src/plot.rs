//! SVG plots of data against model, one per curve.
