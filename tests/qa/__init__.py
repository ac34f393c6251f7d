"""Tests of geo_corrosion.qa."""
