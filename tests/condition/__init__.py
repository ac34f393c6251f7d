"""Tests of geo_corrosion.condition."""
