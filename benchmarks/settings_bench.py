"""Production settings for the loopback throughput benchmark, with only the TLS redirect off.

``benchmarks/api_throughput.py`` serves the app with gunicorn on 127.0.0.1 under these
settings.  Everything of ``sersledger.settings.production`` applies (DEBUG off, SECRET_KEY and
ALLOWED_HOSTS from the environment, secure cookies, HSTS header, persistent database
connections from ``DATABASE_URL``), except ``SECURE_SSL_REDIRECT``: the load generator speaks
plain HTTP on loopback, where a redirect to https would answer every request with a 301 and
measure nothing.  Never use this module to serve the lab.
"""

from sersledger.settings.production import *  # noqa: F403 (an overlay takes every setting)

SECURE_SSL_REDIRECT = False
