"""HTTP views: parse, call one domain function, serialise."""
