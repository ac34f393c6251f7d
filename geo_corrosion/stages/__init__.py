"""The stages of a run, each a plain function: read, open, check, map, assess, plan."""
