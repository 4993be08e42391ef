"""Signal layer: what happens to a radio pulse along and at the ends of a ray."""
