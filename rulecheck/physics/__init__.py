"""Pure engineering functions over SI floats and numpy arrays. No I/O, no layout model."""
