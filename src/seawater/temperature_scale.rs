//! PLACEHOLDER (helper replaces): ITS-90 <-> IPTS-68.
