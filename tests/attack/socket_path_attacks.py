#!/usr/bin/env python3
"""The control socket's path as an attack: what is there must not be harmed.

  - control_socket pointing at a regular file (the config itself): the
    daemon refuses to start, names the file, and the file is untouched
  - a symbolic link as the socket's directory: refused, nothing created
    where it points
  - a directory anyone may write to: refused with the fix (chmod), unless
    it is sticky (as /tmp is)
  - a stale socket (nobody answers) is replaced; a live one stops the
    second daemon
  - a file put where the socket was while the daemon runs is not removed
    when it stops

The rules are the daemon's (our rule, latticed(8) CONTROL SOCKET); the
sticky bit's meaning is POSIX (a sticky directory: only a file's owner
may remove or rename it).
Usage: socket_path_attacks.py LATTICED_BINARY
"""
import os
import socket
import stat
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from daemon_harness import Daemon, binary_from_argv, check, summary  # noqa: E402


def refused(binary, d, what):
    """Runs the daemon, expecting it not to start; returns its stderr."""
    p = subprocess.Popen([binary, "run", "--config", d.conf], stderr=subprocess.PIPE, text=True)
    try:
        _, err = p.communicate(timeout=10)
    except subprocess.TimeoutExpired:     # it started: stop it, that is the failure
        p.terminate()
        _, err = p.communicate()
        err = "(it started) " + err
    check(p.returncode == 1, "%s: the daemon does not start (exit %s)" % (what, p.returncode))
    lines = err.strip().splitlines()
    check(len(lines) == 1, "%s: one line says why (%r)" % (what, err.strip()))
    return err


def main():
    binary = binary_from_argv()
    tmp = tempfile.mkdtemp(prefix="latticed-sockpath-")

    # the config file as the socket path
    d = Daemon(binary, os.path.join(tmp, "file"))
    with open(d.conf) as f:
        text = f.read().replace("control_socket = %s" % d.socket, "control_socket = %s" % d.conf)
    with open(d.conf, "w") as f:
        f.write(text)
    err = refused(binary, d, "a regular file at the socket path")
    check(d.conf in err and "regular file" in err and "not a socket" in err,
          "the message names the file and says it is not a socket (%s)" % err.strip())
    check(os.path.isfile(d.conf) and open(d.conf).read() == text, "the file is still there, unchanged")

    # a symbolic link as the socket's directory
    real = os.path.join(tmp, "real")
    os.mkdir(real, 0o700)
    link = os.path.join(tmp, "link")
    os.symlink(real, link)
    d = Daemon(binary, os.path.join(tmp, "symdir"), socket_path=os.path.join(link, "control"))
    err = refused(binary, d, "a symlinked socket directory")
    check(link in err and "symbolic link" in err, "the message names the link (%s)" % err.strip())
    check(not os.listdir(real), "nothing was created where the link points")

    # a directory anyone may write to, not sticky; then sticky
    open_dir = os.path.join(tmp, "open")
    os.mkdir(open_dir)
    os.chmod(open_dir, 0o777)
    d = Daemon(binary, os.path.join(tmp, "worldwritable"), socket_path=os.path.join(open_dir, "control"))
    err = refused(binary, d, "a world-writable socket directory")
    check(open_dir in err and "writable by everyone" in err and "chmod go-w" in err,
          "the message names the directory and the fix (%s)" % err.strip())
    os.chmod(open_dir, 0o1777)
    check(d.start(), "a sticky world-writable directory (as /tmp) is accepted")
    check(d.stop() == 0, "and the daemon stops cleanly")

    # a stale socket is replaced; a live one stops a second daemon
    d = Daemon(binary, os.path.join(tmp, "stale"))
    os.makedirs(os.path.dirname(d.socket), mode=0o750)
    stale = socket.socket(socket.AF_UNIX)
    stale.bind(d.socket)
    stale.close()                       # bound, never listening: nobody answers
    check(d.start(), "a stale socket nobody answers is replaced")
    second = subprocess.run([binary, "run", "--config", d.conf], capture_output=True, text=True, timeout=30)
    check(second.returncode == 1 and "another latticed is already running" in second.stderr,
          "a second daemon on a live socket refuses (%s)" % second.stderr.strip())

    # a file put where the socket was is not the daemon's to remove
    os.unlink(d.socket)
    with open(d.socket, "w") as f:
        f.write("not a socket\n")
    check(d.stop() == 0, "the daemon stops")
    check(os.path.isfile(d.socket) and not stat.S_ISSOCK(os.lstat(d.socket).st_mode),
          "the file that took the socket's place is still there after the stop")
    return summary()


if __name__ == "__main__":
    sys.exit(main())
