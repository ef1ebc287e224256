"""Writing outputs: front files, the HTML report, fabricator sheets and terminal tables."""
