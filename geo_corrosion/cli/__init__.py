"""The ``geo-corrosion`` command line (thin: parses options, calls the library)."""
