"""What the Python tests that drive the real binaries share (tests/e2e, tests/ops,
tests/crash): a free loopback port, one HTTP request, waiting for a condition, and the
feature block of their configs (the demo's features over seston-sim's columns).

Each test script puts this directory on sys.path before importing it. Standard library
only.
"""

import http.client
import socket
import time

# Four of seston-sim's columns, the sizes on log10 as in config/demo.yaml. Written with
# single braces: it is substituted into a str.format template, not parsed as one.
FEATURES_YAML = """\
features:
  - { column: area_um2, transform: log10 }
  - { column: aspect_ratio }
  - { column: perimeter_um, transform: log10 }
  - { column: grey_level }
"""


def free_port():
    """A TCP port on 127.0.0.1 that nothing listens on at the moment of asking."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def http_request(port, method, path, body=None, headers=None, timeout=5):
    """One request to 127.0.0.1:port; returns (status, body text)."""
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    try:
        connection.request(method, path, body=body, headers=headers or {})
        response = connection.getresponse()
        return response.status, response.read().decode("utf-8", "replace")
    finally:
        connection.close()


def wait_for(condition, seconds, what, interval=0.1, tolerate=()):
    """Calls condition() until it returns a true value, which is returned. Exceptions of
    the types in `tolerate` count as "not yet"; any other propagates at once. Raises
    AssertionError naming `what` and the last value or error after `seconds`."""
    deadline = time.monotonic() + seconds
    last = None
    last_error = None
    while time.monotonic() < deadline:
        try:
            last = condition()
            if last:
                return last
        except tolerate as error:
            last_error = error
        time.sleep(interval)
    detail = f"last: {last!r}" + (f"; last error: {last_error}" if last_error else "")
    raise AssertionError(f"timed out after {seconds} s waiting for {what} ({detail})")
