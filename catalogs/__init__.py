"""Data shipped with strainline: material catalog, copper foils, fabrication capability, schemas."""
