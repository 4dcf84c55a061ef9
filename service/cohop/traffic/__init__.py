"""Traffic figures along a victim's real hop order: latency and deadlines, runs of lost attempts and
messages, watchdog stops (issue 13). `figures.traffic_figures` is the entry point; `pieces` is the one
adapter that reads per-channel loss from the assessment model; `hits` lays the neighbours' hits along the
order for given phases; `chain` steps the messages' fade-state matrices; `latency` reads the mixture."""
