"""Pure equations of respiratory physiology. Plain floats in, plain floats out; units in names."""
