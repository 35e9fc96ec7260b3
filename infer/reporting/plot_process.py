"""Draw the report plots in a second process, started before sampling.

Importing matplotlib and drawing the five figures take about as long as sampling a
two-parameter study. ``qhat estimate`` therefore starts this module as a child process
before it samples: the child imports matplotlib and the plotting code on the second core
while the parent samples, then receives the results (pickled, on its standard input),
writes the PNG files into the report's temporary folder and prints which files it wrote
(JSON, on its standard output).

The child runs in its own process group, so a Ctrl-C at the terminal reaches the parent
only; the parent kills the child before it removes the temporary folder. A child that
finds its standard input empty (the parent stopped early) exits quietly. If the child
cannot start or fails, :meth:`PlotProcess.write` returns None and the caller draws the
plots itself, so the report is the same either way.
"""

from __future__ import annotations

import json
import os
import pickle
import signal
import subprocess
import sys
import sysconfig
from pathlib import Path

__all__ = ["PlotProcess"]


class PlotProcess:
    """A child process that prepares matplotlib now and draws a result's plots later.

    Use as a context manager; the child is killed on exit if it is still running.
    """

    def __init__(self):
        #: why the last :meth:`write` returned None (one line), else None
        self.failure: str | None = None
        env = dict(os.environ, MPLBACKEND="Agg")
        package_root = str(Path(__file__).resolve().parents[2])
        installed = {sysconfig.get_paths()[key] for key in ("purelib", "platlib")}
        if package_root not in installed:  # a source checkout: let the child find it too
            env["PYTHONPATH"] = os.pathsep.join(
                p for p in (package_root, env.get("PYTHONPATH", "")) if p)
        self._process = None
        self._sent = False
        if not sys.executable:  # an embedded interpreter: draw in this process
            return
        try:
            self._process = subprocess.Popen(
                [sys.executable, "-m", "infer.reporting.plot_process"], stdin=subprocess.PIPE,
                stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env, process_group=0)
        except (OSError, ValueError):  # cannot start, or no process groups here
            self._process = None

    def start(self, result, folder: Path) -> None:
        """Send ``result`` to the child, which starts drawing into ``folder`` at once.

        The caller writes the rest of the report meanwhile, then calls :meth:`write` to
        wait for the files. Failures are kept for :meth:`write` to report.
        """
        if self._process is None or self._sent:
            return
        try:
            payload = pickle.dumps((result, str(folder)), protocol=pickle.HIGHEST_PROTOCOL)
        except (pickle.PicklingError, TypeError, AttributeError) as error:
            self.failure = f"the result cannot be sent to the plot process: {error}"
            self.close()
            self._process = None
            return
        try:
            self._process.stdin.write(payload)
            self._process.stdin.close()
        except (OSError, ValueError) as error:  # the child has gone: write() reports it
            self.failure = f"the plot process stopped: {error}"
        self._sent = True

    def write(self, result, folder: Path) -> dict[str, str] | None:
        """Have the child write the plots of ``result`` into ``folder`` and wait for it.

        After :meth:`start` this only waits for the files already being drawn.

        Returns
        -------
        dict of str to str, or None
            Plot key -> file name, as :func:`infer.reporting.plots.figures.write_plots` returns;
            None if the child could not draw them (the caller then draws them itself).
        """
        if self._process is None:
            self.failure = self.failure or "the plot process could not be started"
            return None
        if self._sent:
            return self._collect(None)
        try:
            payload = pickle.dumps((result, str(folder)), protocol=pickle.HIGHEST_PROTOCOL)
        except (pickle.PicklingError, TypeError, AttributeError) as error:
            self.failure = f"the result cannot be sent to the plot process: {error}"
            self.close()
            return None
        return self._collect(payload)

    def _collect(self, payload: bytes | None) -> dict[str, str] | None:
        """Send ``payload`` (None: already sent), wait, and read the files written."""
        try:
            if payload is None:  # stdin already closed by start(); the child writes little
                out = self._process.stdout.read()  # to stderr (one line on failure), so
                err = self._process.stderr.read()  # reading one pipe after the other is safe
                self._process.wait()
            else:
                out, err = self._process.communicate(payload)
        except (OSError, ValueError) as error:  # ValueError: its pipes are already closed
            self.failure = f"the plot process stopped: {error}"
            self.close()
            return None
        if self._process.returncode != 0:
            self.failure = err.decode(errors="replace").strip() or (
                f"the plot process ended with status {self._process.returncode}")
            return None
        try:
            written = json.loads(out)
        except ValueError:
            written = None
        if not isinstance(written, dict):
            self.failure = "the plot process gave no list of files"
            return None
        return written

    def close(self) -> None:
        """Kill the child if it is still running and reap it."""
        if self._process is not None and self._process.poll() is None:
            self._process.kill()
            self._process.wait()
        if self._process is not None:
            for pipe in (self._process.stdin, self._process.stdout, self._process.stderr):
                if pipe is not None and not pipe.closed:
                    pipe.close()

    def __enter__(self) -> PlotProcess:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def _warm_up() -> None:
    """Import the figure and Agg modules and load the font by drawing a tiny figure."""
    import io

    from infer.reporting.plots.save import new_figure

    figure = new_figure(figsize=(1, 1), dpi=20)
    figure.add_subplot().set_title("warm-up 0.1")
    figure.savefig(io.BytesIO(), format="png")


def _child() -> int:
    """The child: import, wait for the pickled (result, folder), draw, report the files."""
    if hasattr(signal, "SIGXFSZ"):   # a file size limit fails the write, not the child
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
    try:
        import matplotlib

        matplotlib.use("Agg")
        import infer.jobs.estimate.results  # noqa: F401  (what unpickling the result needs, imported now)
        from infer.reporting.plots.figures import write_plots

        _warm_up()
        payload = sys.stdin.buffer.read()
        if not payload:
            return 0
        result, folder = pickle.loads(payload)
        written = write_plots(result, Path(folder))
        sys.stdout.write(json.dumps(written))
        return 0
    except KeyboardInterrupt:
        return 130
    except Exception as error:  # reported in one line; the parent falls back
        print(f"plot process: {type(error).__name__}: {error}", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(_child())
