"""What a person reads: result files, plots, the HTML report and printed text."""
