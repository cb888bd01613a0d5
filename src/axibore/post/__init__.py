"""Post-processing: wall tables, forces, 1D comparison inputs, cavitation and warnings."""
