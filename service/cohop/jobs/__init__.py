"""The use cases: assess (`jobs.assess`), plan (`jobs.plan`) and re-plan (`jobs.replan`).

Each takes a request of `jobs.requests` and returns a result object (an answer, `jobs.answers`) that
carries every decision its response shows; the response schemas dump it as it is.
"""
