"""The exact total of independent items: grids, transforms and the totals they give."""
