"""Faults outside plumb's control: the process killed mid-run, a full disk
(a file-size limit), and a reader that stops reading. An output file named
with -o is either absent, its previous content, or complete; never partial."""
import errno
import os
import resource
import shutil
import signal
import stat
import subprocess
import tempfile
import threading
import time
import unittest

from plumbtest import PLUMB, PlumbCase, run, simulated_holdout, write

IO = 5


def make_big_input(path, blocks):
    """A score file of `blocks` thousand rows, written fast by repeating one
    block of a thousand lines."""
    block = "".join(f"{i},{(i * 37 % 1000) / 1000:.3f},note {i}\n" for i in range(1000))
    with open(path, "w") as f:
        f.write("id,risk,note\n")
        f.write(block * blocks)


def temp_files(directory):
    return [f for f in os.listdir(directory) if ".plumb-" in f]


class Faults(PlumbCase):
    @classmethod
    def setUpClass(cls):
        cls._shared = tempfile.TemporaryDirectory(prefix="plumb-faults-")
        d = cls._shared.name
        rows = ["risk,missed"] + [f"{s},{y}" for s, y in simulated_holdout(500, seed=3)]
        write(os.path.join(d, "h.csv"), "\n".join(rows) + "\n")
        cls.map = os.path.join(d, "m.json")
        run("fit", "--map", "isotonic", "--score", "risk", "--label", "missed", os.path.join(d, "h.csv"), "-o",
            cls.map, "-q", check=True)
        cls.big = os.path.join(d, "big.csv")
        make_big_input(cls.big, 3000)  # 3 million rows, about 50 MB
        cls.reference = os.path.join(d, "reference.csv")
        run("apply", cls.map, cls.big, "-o", cls.reference, "-q", check=True)
        with open(cls.reference, "rb") as f:
            cls.reference_bytes = f.read()

    @classmethod
    def tearDownClass(cls):
        cls._shared.cleanup()

    # --- SIGKILL during apply -o ---------------------------------------------

    def kill_during_apply(self, out, when):
        """Starts apply -o OUT and kills it with SIGKILL once `when(temp size
        or None)` says so. Returns (exit status, temp size seen at the kill)."""
        proc = subprocess.Popen([PLUMB, "apply", self.map, self.big, "-o", out, "-q"], stdout=subprocess.DEVNULL,
                                stderr=subprocess.PIPE)
        directory = os.path.dirname(out)
        seen = None
        deadline = time.monotonic() + 20
        while proc.poll() is None and time.monotonic() < deadline:
            temps = temp_files(directory)
            size = None
            if temps:
                try:
                    size = os.stat(os.path.join(directory, temps[0])).st_size
                except FileNotFoundError:
                    size = None  # renamed into place just now
            if when(size):
                seen = size
                proc.send_signal(signal.SIGKILL)
                break
            time.sleep(0.0005)
        proc.wait(timeout=20)
        proc.stderr.close()
        return proc.returncode, seen

    def test_sigkill_never_leaves_a_partial_output(self):
        total = len(self.reference_bytes)
        previous = b"id,risk,note,risk_calibrated\nprevious,run,kept,0.5\n"
        points = [
            ("at once", lambda size: True),
            ("temporary file created", lambda size: size is not None),
            ("a quarter written", lambda size: size is not None and size >= total // 4),
            ("half written", lambda size: size is not None and size >= total // 2),
            ("nine tenths written", lambda size: size is not None and size >= total * 9 // 10),
            ("fully written, not yet renamed", lambda size: size is not None and size >= total),
        ]
        partial_kills = 0
        for keep_previous in (True, False):
            for name, when in points:
                what = f"{name}, previous output {'present' if keep_previous else 'absent'}"
                out = self.path("out.csv")
                if keep_previous:
                    with open(out, "wb") as f:
                        f.write(previous)
                elif os.path.exists(out):
                    os.remove(out)
                status, seen = self.kill_during_apply(out, when)
                self.assertIn(status, (-signal.SIGKILL, 0), what)
                if status == -signal.SIGKILL and seen is not None and 0 < seen < total:
                    partial_kills += 1
                if os.path.exists(out):
                    with open(out, "rb") as f:
                        content = f.read()
                    if content != self.reference_bytes:
                        self.assertEqual(content, previous if keep_previous else None,
                                         f"{what}: a partial file of {len(content)} bytes is at the output")
                else:
                    self.assertFalse(keep_previous, f"{what}: the previous output vanished")
                    self.assertNotEqual(status, 0, f"{what}: finished but wrote nothing")
                if status == 0:
                    self.assertEqual(temp_files(self.dir), [], what)
                # A killed process cannot remove its temporary file; that is
                # expected, and it is hidden beside the output.
                for leftover in temp_files(self.dir):
                    self.assertRegex(leftover, r"^\.out\.csv\.plumb-\w{6}$")
                    os.remove(self.path(leftover))
        # The run must really have been interrupted mid-write, or the test
        # says nothing.
        self.assertGreaterEqual(partial_kills, 4)

    # --- full disk -------------------------------------------------------------

    @staticmethod
    def file_size_limit(limit):
        def apply_limit():
            resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
            # Without this the kernel kills the process with SIGXFSZ; ignored,
            # write() fails with EFBIG as on a full disk.
            signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        return apply_limit

    def run_limited(self, limit, *args):
        proc = subprocess.run([PLUMB, *args], capture_output=True, text=True, preexec_fn=self.file_size_limit(limit))
        return proc.returncode, proc.stdout, proc.stderr

    def assert_write_refused(self, limit, args, out, previous=None):
        if previous is not None:
            write(out, previous)
        rc, _, err = self.run_limited(limit, *args)
        self.assertEqual(rc, IO, err)
        lines = [l for l in err.splitlines() if l.strip()]
        self.assertEqual(len(lines), 1, err)
        self.assertIn(os.path.basename(out), lines[0])
        self.assertIn("cannot write", lines[0])
        self.assertIn(os.strerror(errno.EFBIG), lines[0])
        self.assertEqual(temp_files(self.dir), [])
        if previous is None:
            self.assertFalse(os.path.exists(out))
        else:
            with open(out) as f:
                self.assertEqual(f.read(), previous)

    def test_full_disk_while_streaming(self):
        # The limit is hit by a buffered write in the middle of the run.
        make_big_input(self.path("mid.csv"), 200)
        out = self.path("out.csv")
        args = ["apply", self.map, self.path("mid.csv"), "-o", out]
        self.assert_write_refused(3 << 20, args, out)
        self.assert_write_refused(3 << 20, args, out, previous="id,risk,note,risk_calibrated\n1,0.5,x,0.5\n")

    def test_full_disk_at_the_final_flush(self):
        # Less than one buffer of output: the write fails only at commit.
        make_big_input(self.path("small.csv"), 5)
        out = self.path("out.csv")
        self.assert_write_refused(20000, ["apply", self.map, self.path("small.csv"), "-o", out], out)
        artifact = self.path("m.json")
        self.assert_write_refused(100, ["fit", "--map", "platt", "--score", "risk", "--label", "missed",
                                        os.path.join(self._shared.name, "h.csv"), "-o", artifact], artifact)
        # The same runs without the limit succeed: the limit was the cause.
        rc, _, err = run("apply", self.map, self.path("small.csv"), "-o", out, "-q")
        self.assertEqual(rc, 0, err)
        self.assertGreater(os.path.getsize(out), 20000)

    def test_an_output_directory_that_does_not_exist(self):
        out = self.path(os.path.join("missing", "out.csv"))
        self.assert_refused(["apply", self.map, os.path.join(self._shared.name, "h.csv"), "-o", out], IO,
                            "missing/out.csv", "cannot create a temporary file")

    def test_output_to_a_named_pipe_keeps_the_pipe(self):
        # -o naming a FIFO (or a device such as /dev/null) writes into it; a
        # temporary file renamed over it would replace it with a regular file.
        fifo = self.path("stream")
        os.mkfifo(fifo)
        received = []

        def drain():
            with open(fifo, "rb") as f:
                received.append(f.read())

        reader = threading.Thread(target=drain, daemon=True)
        reader.start()
        h = os.path.join(self._shared.name, "h.csv")
        rc, _, err = run("apply", self.map, h, "-o", fifo, "-q")
        reader.join(timeout=10)
        self.assertEqual(rc, 0, err)
        self.assertFalse(reader.is_alive(), "nothing was written into the pipe")
        self.assertTrue(stat.S_ISFIFO(os.stat(fifo).st_mode), "the pipe was replaced")
        rc, expected, err = run("apply", self.map, h, "-q")
        self.assertEqual(received, [expected.encode()])
        self.assertEqual(temp_files(self.dir), [])

    # --- a reader that stops reading ----------------------------------------

    def test_a_closed_pipe_ends_apply_quietly_by_sigpipe(self):
        started = time.monotonic()
        proc = subprocess.Popen([PLUMB, "apply", self.map, self.big], stdout=subprocess.PIPE,
                                stderr=subprocess.PIPE)
        first = proc.stdout.readline()
        proc.stdout.close()
        status = proc.wait(timeout=15)
        err = proc.stderr.read()
        proc.stderr.close()
        self.assertEqual(first, b"id,risk,note,risk_calibrated\n")
        # The default action of SIGPIPE ends the process, as for any filter.
        self.assertEqual(status, -signal.SIGPIPE)
        self.assertEqual(err, b"")
        self.assertLess(time.monotonic() - started, 10)

    def test_a_shell_pipeline_into_head(self):
        bash = shutil.which("bash") or "/bin/bash"
        script = f'"{PLUMB}" apply "{self.map}" "{self.big}" | head -1; echo "status ${{PIPESTATUS[0]}}" >&2'
        proc = subprocess.run([bash, "-c", script], capture_output=True, text=True, timeout=15)
        self.assertEqual(proc.stdout, "id,risk,note,risk_calibrated\n")
        self.assertEqual(proc.stderr.strip(), "status 141")  # 128 + SIGPIPE

    def test_with_sigpipe_ignored_a_closed_pipe_is_one_io_error(self):
        # A parent that ignores SIGPIPE passes that on; write() then fails
        # with EPIPE, which is reported like any other write error.
        proc = subprocess.Popen([PLUMB, "apply", self.map, self.big], stdout=subprocess.PIPE,
                                stderr=subprocess.PIPE,
                                preexec_fn=lambda: signal.signal(signal.SIGPIPE, signal.SIG_IGN))
        proc.stdout.readline()
        proc.stdout.close()
        status = proc.wait(timeout=15)
        err = proc.stderr.read().decode()
        proc.stderr.close()
        self.assertEqual(status, IO)
        lines = err.splitlines()
        self.assertEqual(len(lines), 1, err)
        self.assertIn("<stdout>", lines[0])
        self.assertIn(os.strerror(errno.EPIPE), lines[0])


if __name__ == "__main__":
    unittest.main()
