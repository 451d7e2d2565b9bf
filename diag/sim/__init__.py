"""The simulator: labelled synthetic logs for tests, benchmarks and the demo."""
