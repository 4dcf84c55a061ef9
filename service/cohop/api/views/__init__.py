"""HTTP views: parse the request, call one job, return its answer for the response schema to dump."""
