"""cross-fit killed with SIGKILL at points from its start to its last rename:
the --oof file and the -o artifact are each either absent, their previous
content, or complete; never partial. The --oof file is committed before the
artifact, so a new artifact always comes with its new --oof file."""
import os
import signal
import subprocess
import tempfile
import time
import unittest

from plumbtest import PLUMB, Lcg, PlumbCase, run, write


def temp_files(directory):
    return [f for f in os.listdir(directory) if ".plumb-" in f]


def read_or_none(path):
    try:
        with open(path, "rb") as f:
            return f.read()
    except FileNotFoundError:
        return None


class CrossFitKilled(PlumbCase):
    @classmethod
    def setUpClass(cls):
        # Few rows to fit, wide rows to write: the fit takes a moment and the
        # --oof file (every input row passed through) takes long enough to
        # be caught half written. About 90,000 rows of 400 bytes, 36 MB.
        cls._shared = tempfile.TemporaryDirectory(prefix="plumb-faults-cf-")
        d = cls._shared.name
        g = Lcg(13)
        pad = "p" * 380
        lines = ["id,risk,missed,note"]
        for i in range(90000):
            s = round(g.uniform(), 3)
            lines.append(f"{i},{s},{1 if g.uniform() < s else 0},{pad}")
        cls.input = os.path.join(d, "h.csv")
        write(cls.input, "\n".join(lines) + "\n")
        cls.ref_oof, cls.ref_map = os.path.join(d, "oof.csv"), os.path.join(d, "m.json")
        run(*cls.args(cls.ref_oof, cls.ref_map), check=True)
        cls.oof_bytes, cls.map_bytes = read_or_none(cls.ref_oof), read_or_none(cls.ref_map)

    @classmethod
    def tearDownClass(cls):
        cls._shared.cleanup()

    @classmethod
    def args(cls, oof, artifact):
        return ["cross-fit", "--map", "platt,histogram", "--score", "risk", "--label", "missed", "--no-timestamp",
                "--oof", oof, "-o", artifact, "-q", cls.input]

    def kill_when(self, oof, artifact, when):
        """Runs cross-fit and kills it with SIGKILL as soon as `when(state)`
        holds; `state` has the sizes of the temporary files of the --oof
        file and the artifact (None while absent) and whether the --oof file
        at the target is the new one. Returns (exit status, killed state)."""
        proc = subprocess.Popen([PLUMB, *self.args(oof, artifact)], stdout=subprocess.DEVNULL,
                                stderr=subprocess.DEVNULL)
        oof_temp, map_temp = "." + os.path.basename(oof) + ".plumb-", "." + os.path.basename(artifact) + ".plumb-"
        seen = None
        deadline = time.monotonic() + 60
        while proc.poll() is None and time.monotonic() < deadline:
            state = {"oof_temp": None, "map_temp": None, "oof_new": False}
            for name in temp_files(self.dir):
                key = "oof_temp" if name.startswith(oof_temp) else "map_temp" if name.startswith(map_temp) else None
                if key:
                    try:
                        state[key] = os.stat(os.path.join(self.dir, name)).st_size
                    except FileNotFoundError:
                        pass  # renamed into place just now
            try:
                state["oof_new"] = os.stat(oof).st_size == len(self.oof_bytes)
            except FileNotFoundError:
                pass
            if when(state):
                seen = state
                proc.send_signal(signal.SIGKILL)
                break
            time.sleep(0.0005)
        proc.wait(timeout=60)
        return proc.returncode, seen

    def test_sigkill_never_leaves_a_partial_oof_file_or_artifact(self):
        total = len(self.oof_bytes)
        self.assertGreater(total, 30 << 20)
        previous_oof = b"id,risk,missed,note,oof_fold,oof_platt,oof_histogram\nold,0.5,1,x,1,0.5,0.5\n"
        previous_map = b'{"previous": "artifact"}\n'

        def oof_written(fraction):
            return lambda s: s["oof_temp"] is not None and s["oof_temp"] >= total * fraction

        points = [
            ("at once", lambda s: True),
            ("--oof temporary file created", lambda s: s["oof_temp"] is not None),
            ("--oof a quarter written", oof_written(0.25)),
            ("--oof half written", oof_written(0.5)),
            ("--oof nine tenths written", oof_written(0.9)),
            ("--oof fully written, not yet renamed", oof_written(1.0)),
            ("--oof in place", lambda s: s["oof_new"] and s["oof_temp"] is None),
            ("artifact temporary file created", lambda s: s["map_temp"] is not None),
        ]
        partial_kills = 0
        outcomes = set()
        for keep_previous in (True, False):
            for name, when in points:
                what = f"{name}, previous outputs {'present' if keep_previous else 'absent'}"
                oof, artifact = self.path("oof.csv"), self.path("m.json")
                for path, previous in ((oof, previous_oof), (artifact, previous_map)):
                    if keep_previous:
                        with open(path, "wb") as f:
                            f.write(previous)
                    elif os.path.exists(path):
                        os.remove(path)
                status, seen = self.kill_when(oof, artifact, when)
                self.assertIn(status, (-signal.SIGKILL, 0), what)
                if status == -signal.SIGKILL and seen["oof_temp"] is not None and 0 < seen["oof_temp"] < total:
                    partial_kills += 1
                got_oof, got_map = read_or_none(oof), read_or_none(artifact)
                allowed_oof = (self.oof_bytes, previous_oof if keep_previous else None)
                allowed_map = (self.map_bytes, previous_map if keep_previous else None)
                self.assertIn(got_oof, allowed_oof,
                              f"{what}: --oof file of {len(got_oof or b'')} bytes is neither complete nor the previous")
                self.assertIn(got_map, allowed_map, f"{what}: the artifact is neither complete nor the previous")
                if got_map == self.map_bytes:
                    self.assertEqual(got_oof, self.oof_bytes, f"{what}: a new artifact with an old --oof file")
                if status == 0:
                    self.assertEqual((got_oof, got_map), (self.oof_bytes, self.map_bytes), what)
                    self.assertEqual(temp_files(self.dir), [], what)
                outcomes.add((got_oof == self.oof_bytes, got_map == self.map_bytes))
                # A killed process cannot remove its temporary file; it is
                # left hidden beside its target, named after it.
                for leftover in temp_files(self.dir):
                    self.assertRegex(leftover, r"^\.(oof\.csv|m\.json)\.plumb-\w{6}$", what)
                    os.remove(self.path(leftover))
        # The runs must really have been interrupted mid-write, and at each
        # stage: nothing new, only the --oof file new, both new.
        self.assertGreaterEqual(partial_kills, 4)
        self.assertIn((False, False), outcomes)
        self.assertIn((True, False), outcomes)


if __name__ == "__main__":
    unittest.main()
