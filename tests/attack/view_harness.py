"""`latticed view` for the tests: start one on a daemon's socket (or any
socket), talk HTTP to it, and a fake daemon of our own that says what a
test wants on a Unix socket.  Python's standard library only.

Sources of the facts used:
  - RFC 9110/9112 (HTTP semantics and HTTP/1.1): status codes, Host,
    Content-Length, Allow.
  - The Server-Sent Events format (HTML Living Standard, "Server-sent
    events"): "data:" lines, a blank line ends a message, ":" a comment.
"""
import http.client
import json
import os
import socket
import subprocess
import threading
import time


def free_port():
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    return port


class View:
    """One `latticed view` process; its stdout and stderr in files."""

    def __init__(self, binary, socket_path, directory, extra=(), port=None, name="view"):
        self.binary, self.socket_path, self.extra = binary, socket_path, list(extra)
        self.port = port or free_port()
        self.out_path = os.path.join(directory, name + ".out")
        self.err_path = os.path.join(directory, name + ".err")
        self.proc = None

    def start(self, wait=True):
        self.out = open(self.out_path, "w")
        self.err = open(self.err_path, "w")
        env = dict(os.environ)
        env["ASAN_OPTIONS"] = ":".join(filter(None, [env.get("ASAN_OPTIONS"), "quarantine_size_mb=8"]))
        self.proc = subprocess.Popen([self.binary, "view", "--socket", self.socket_path,
                                      "--listen", "127.0.0.1:%d" % self.port] + self.extra,
                                     stdout=self.out, stderr=self.err, env=env)
        if not wait:
            return True
        end = time.time() + 20
        while time.time() < end and self.proc.poll() is None:
            try:
                if self.get("/state")[0] == 200:
                    return True
            except OSError:
                pass
            time.sleep(0.05)
        return False

    def alive(self):
        return self.proc is not None and self.proc.poll() is None

    def stop(self):
        if self.alive():
            self.proc.terminate()
            try:
                self.proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self.out.close()
        self.err.close()
        return self.proc.returncode

    def log_text(self):
        for f in (self.out, self.err):
            if not f.closed:
                f.flush()
        with open(self.out_path, errors="replace") as a, open(self.err_path, errors="replace") as b:
            return a.read() + b.read()

    def token(self):
        for line in self.log_text().splitlines():
            if "control token " in line:
                return line.split("control token ")[1].split(";")[0]
        return None

    def request(self, method, path, body=None, headers=None, timeout=10):
        c = http.client.HTTPConnection("127.0.0.1", self.port, timeout=timeout)
        try:
            c.request(method, path, body=body, headers=headers or {})
            r = c.getresponse()
            return r.status, dict(r.getheaders()), r.read()
        finally:
            c.close()

    def get(self, path, **kw):
        return self.request("GET", path, **kw)

    def state(self):
        status, _, body = self.get("/state")
        return json.loads(body) if status == 200 else None

    def wait_state(self, pred, timeout=10.0):
        end = time.time() + timeout
        st = None
        while time.time() < end:
            try:
                st = self.state()
                if st is not None and pred(st):
                    return st
            except (OSError, ValueError):
                pass
            time.sleep(0.02)
        return st

    def control(self, line, token, origin=None):
        headers = {"Content-Type": "text/plain"}
        if token is not None:
            headers["X-Latticed-Token"] = token
        if origin:
            headers["Origin"] = origin
        status, _, body = self.request("POST", "/control", body=line.encode(), headers=headers)
        return status, json.loads(body) if body else {}


class EventStream:
    """GET /events, read in a thread: every message's data as JSON."""

    def __init__(self, port, rcvbuf=None, read=True):
        self.sock = socket.create_connection(("127.0.0.1", port), timeout=10)
        if rcvbuf:
            self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_RCVBUF, rcvbuf)
        self.sock.sendall(b"GET /events HTTP/1.1\r\nHost: 127.0.0.1:%d\r\nAccept: text/event-stream\r\n\r\n" % port)
        self.messages = []
        self.closed = False
        if read:
            threading.Thread(target=self._run, daemon=True).start()

    def _run(self):
        buf = b""
        self.sock.settimeout(None)
        while True:
            try:
                chunk = self.sock.recv(65536)
            except OSError:
                chunk = b""
            if not chunk:
                self.closed = True
                return
            buf += chunk
            # chunked transfer coding: the event lines sit inside chunks; the
            # SSE framing is what matters, so split on data lines directly
            while b"\n\n" in buf:
                block, buf = buf.split(b"\n\n", 1)
                for line in block.split(b"\n"):
                    line = line.rstrip(b"\r")
                    i = line.find(b"data: ")
                    if i >= 0:
                        try:
                            self.messages.append((time.time(), json.loads(line[i + 6:])))
                        except ValueError:
                            pass

    def close(self):
        try:
            self.sock.close()
        except OSError:
            pass


class FakeDaemon:
    """A Unix socket that answers each connection with `script(conn, n)`,
    n counting connections from 1 (a test's own program, not latticed)."""

    def __init__(self, path, script):
        self.path, self.script = path, script
        self.connections = 0
        self.requests = []
        if os.path.exists(path):
            os.unlink(path)
        self.sock = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
        self.sock.bind(path)
        self.sock.listen(16)
        self.stopped = False
        threading.Thread(target=self._run, daemon=True).start()

    def _run(self):
        while not self.stopped:
            try:
                conn, _ = self.sock.accept()
            except OSError:
                return
            self.connections += 1
            threading.Thread(target=self._serve, args=(conn, self.connections), daemon=True).start()

    def _serve(self, conn, n):
        try:
            conn.settimeout(2)
            try:
                self.requests.append(conn.recv(100))
            except OSError:
                pass
            self.script(conn, n)
        except OSError:
            pass
        finally:
            conn.close()

    def stop(self):
        self.stopped = True
        self.sock.close()
        if os.path.exists(self.path):
            os.unlink(self.path)
