"""Certified type maps: interval enclosures of the equation over cells, and adaptive refinement that proves,
cell by cell, where each type can and cannot be (interval analysis: R. E. Moore 1966; Moore, Kearfott and
Cloud, "Introduction to Interval Analysis", SIAM 2009)."""
