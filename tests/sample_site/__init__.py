"""Tests of the sample-site generator and of the committed sample site."""
