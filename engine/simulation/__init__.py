"""The total by simulation: designs, pairing for rank correlation, and the lanes that run them."""
