"""Tests of the repair layout, quantities, zoning and tender exporters (issue 5)."""
