"""One module per command of ``geo-corrosion``."""
