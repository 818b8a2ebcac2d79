"""Riser suggestions: the features the reject model learns from, the model,
the candidate risers, their price in metal and in scrap, and the what-if."""
