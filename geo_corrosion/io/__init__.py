"""Reading input files: survey readings (CSV, GeoJSON, GeoPackage) and plan layers."""
