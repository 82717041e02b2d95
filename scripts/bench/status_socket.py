"""The status socket's protocol for the bench scripts: one request line, one answer line."""

import json
import socket


def ask(path, timeout=2.0):
    """The service's status document (raises OSError or ValueError when it does not answer)."""
    with socket.socket(socket.AF_UNIX, socket.SOCK_STREAM) as s:
        s.settimeout(timeout)
        s.connect(path)
        s.sendall(b"status\n")
        data = b""
        while not data.endswith(b"\n"):
            chunk = s.recv(65536)
            if not chunk:
                break
            data += chunk
    return json.loads(data)
