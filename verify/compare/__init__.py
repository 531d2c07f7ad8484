"""Comparison stage: claims + analysis results -> rows and findings. Knows nothing of files."""
