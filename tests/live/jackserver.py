"""A JACK server with its dummy backend for live tests: started and stopped by PID, unique name.

The facts behind each step (measured on Debian 12, jackd2 1.9.21, PortAudio 19.6) are in the
contributor guide: the server must run before the program under test initialises PortAudio;
JACK_DEFAULT_SERVER selects it; --port-max 64 keeps its shared memory small; --no-realtime for
unprivileged test runs; tear down the feeder first, then the server.
"""
import json
import os
import shutil
import signal
import subprocess
import sys
import time


def need_jack():
    if shutil.which("jackd") is None or shutil.which("jack_lsp") is None:
        sys.exit("jackd2 is not installed (scripts/setup installs it)")


class Server:
    def __init__(self, rate=48000, period=1024, loopback=2):
        need_jack()
        self.name = f"mltest{os.getpid()}x{int(time.time() * 1000) % 100000}"
        self.env = dict(os.environ, JACK_DEFAULT_SERVER=self.name, JACK_NO_START_SERVER="1")
        self.rate, self.period = rate, period
        self.logname = f"jackd-{self.name}.log"
        self.cmd = ["jackd", "--no-realtime", "-S", "-t", "5000", "--port-max", "64", "-n", self.name,
                    "-L", str(loopback), "-d", "dummy", "-r", str(rate), "-p", str(period), "-C", "0", "-P", "0"]
        self.feeds = []
        self.start()
        try:
            self.wait_port("loopback:capture_1")
        except RuntimeError:
            # JACK registers at most 8 servers in /dev/shm/jack-shm-registry and never reclaims
            # the slot of a server that was killed (SIGKILL) under another name; with no JACK
            # server running at all, the stale registry can go and a new one is made.
            with open(self.logname) as f:
                full = "Too many servers" in f.read()
            if not full or subprocess.run(["pgrep", "-x", "jackd"], capture_output=True).returncode == 0:
                raise
            os.remove("/dev/shm/jack-shm-registry")
            self.start()
            self.wait_port("loopback:capture_1")

    def start(self):
        self.log = open(self.logname, "w")
        self.proc = subprocess.Popen(self.cmd, stdout=self.log, stderr=subprocess.STDOUT, env=self.env)

    def ports(self):
        p = subprocess.run(["jack_lsp"], env=self.env, capture_output=True, text=True, timeout=10)
        return p.stdout.split()

    def wait_port(self, port, timeout=10.0):
        end = time.time() + timeout
        while time.time() < end:
            if self.proc.poll() is not None:
                raise RuntimeError(f"jackd exited with {self.proc.returncode}")
            if port in self.ports():
                return
            time.sleep(0.1)
        raise RuntimeError(f"port {port} did not appear")

    def feed(self, feeder, client, path, once=False):
        """Starts ml-feed playing path as client; returns its Popen."""
        args = [feeder, client, path] + (["--once"] if once else [])
        p = subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=self.env)
        line = p.stdout.readline().strip()
        if line != "ready":
            raise RuntimeError(f"ml-feed did not start: {p.stderr.read()}")
        self.feeds.append(p)
        return p

    def run(self, args, timeout=120, **kw):
        return subprocess.run(args, env=self.env, capture_output=True, text=True, timeout=timeout, **kw)

    def live_json(self, exe, args):
        """Runs `exe live --format json args...`; returns (status, parsed report or None, stderr)."""
        p = self.run([exe, "live", "--format", "json"] + list(args))
        try:
            return p.returncode, json.loads(p.stdout), p.stderr
        except ValueError:
            return p.returncode, None, p.stderr

    def popen(self, args, **kw):
        return subprocess.Popen(args, env=self.env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, **kw)

    def kill(self):
        """Stops the server in the middle of the clients' work (for fault tests). SIGTERM: jackd
        shuts down at once, and unlike SIGKILL it frees its slot in JACK's server registry."""
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            self.proc.wait(timeout=10)

    def close(self):
        for p in self.feeds:
            if p.poll() is None:
                p.terminate()
                try:
                    p.wait(timeout=5)
                except subprocess.TimeoutExpired:
                    p.kill()
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self.log.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
