"""The service's routers: jobs (analyses and comparisons), synchronous work, metadata."""
