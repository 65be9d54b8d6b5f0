//! PLACEHOLDER (helper replaces): van 't Hoff solute potential.
