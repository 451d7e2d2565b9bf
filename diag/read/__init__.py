"""Reading logs: sources, column and time detection, normalising, the Parquet store, rain gauges."""
