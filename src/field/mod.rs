//! 2-D quasi-static field solver for transmission-line cross-sections (being built; issue 5).
