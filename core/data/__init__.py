"""Background data files: readers per format, interpolated fields, data sources for equations."""
