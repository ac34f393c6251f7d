"""Property tests (hypothesis) of the repair layout, quantities and zoning."""
