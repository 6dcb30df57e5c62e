"""Direct collocation: schemes, first guesses and scales, the NLP solved by IPOPT."""
