"""The diagnosis stages, in pipeline order: reference, steps, events, classify, fading statistics, cross-polar,
outage, findings; prediction turns a Link into model expectations."""
