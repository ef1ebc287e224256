"""Reading inputs: the material catalog, study files and stackup files, validated on load."""
