"""Input: the case file, its bounds, units, clock times and free text made safe."""
