"""Words and pictures for the results: explanations, the renderer, lineup, plots."""
