"""End-to-end invariants of the pipeline's stages, read from the files a run writes."""
