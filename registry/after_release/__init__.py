"""Evidence after release: what serving systems served, the outcomes that arrive later, and
the drift, shadow agreement and live quality read from them, window by window.

Pure code on Arrow batches, numpy arrays and the datasets and evaluation packages' summaries;
the catalogue, the command line and the web pages sit above it.
"""
