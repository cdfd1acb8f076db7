"""Reading and grains: EBSD exports, phases and cleaning, the structural frame, grain reconstruction."""
