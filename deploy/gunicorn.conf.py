# Gunicorn configuration for cohop: `gunicorn -c deploy/gunicorn.conf.py`.
# The settings live in the package (cohop/gunicorn_conf.py) so that `cohop serve` uses the same ones;
# every value comes from the COHOP_ environment variables documented in DEVELOPERS.md.
from cohop.gunicorn_conf import *  # noqa: F401,F403
