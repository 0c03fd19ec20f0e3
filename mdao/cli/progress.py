"""Progress display of the command line, on stderr, with tqdm.

The studies report progress through plain callbacks and print nothing; these are the callbacks
the commands hand them. Both are silent when stderr is not a terminal (a pipe, a file, a CI log)
and with ``--quiet``:

- :class:`StepDisplay`, ``display(step, done, total)`` (:func:`mdao.studies.review.run_review`):
  a line when a step starts, a line with its wall time when it ends, and for steps made of many
  units (the re-optimizations) a tqdm bar.
- :class:`OptimizationCounter`, ``counter(done, total)``
  (:func:`mdao.studies.scaleout.optimize_many`): a tqdm bar over the optimizations.
"""
import sys
import time

from tqdm import tqdm


def _shown(stream, enabled):
    """Whether to display: ``enabled`` when given, else whether ``stream`` is a terminal."""
    if enabled is not None:
        return bool(enabled)
    return bool(getattr(stream, "isatty", lambda: False)())


class StepDisplay:
    """Step lines and a tqdm bar for ``progress(step, done, total)`` callbacks.

    The study calls ``progress(step, 0, total)`` when a step starts, ``progress(step, total,
    total)`` when it ends and, for a step of ``total > 1`` units, ``progress(step, done, total)``
    after each unit in between.

    Parameters
    ----------
    prefix : str
        Start of every line (``"review"``).
    stream : file, optional
        Where to write (default: ``sys.stderr`` at the time of writing).
    enabled : bool, optional
        Display or not; default: when ``stream`` is a terminal.
    """

    def __init__(self, prefix, stream=None, enabled=None):
        self.prefix = prefix
        self.stream = stream
        self.enabled = enabled
        self._t0 = time.perf_counter()
        self._bar = None

    def __call__(self, step, done, total):
        stream = self._stream()
        if not _shown(stream, self.enabled):
            return
        if done == 0:
            self._t0 = time.perf_counter()
            self._write(stream, f"{self.prefix}: {step} ...\n")
            if total > 1:
                self._bar = tqdm(total=total, file=stream, leave=False, unit="opt",
                                 dynamic_ncols=True)
            return
        if self._bar is not None:
            self._bar.update(done - self._bar.n)
            if done >= total:
                self._bar.close()
                self._bar = None
        if done >= total:
            self._write(stream, f"{self.prefix}: {step} done in "
                                f"{time.perf_counter() - self._t0:.2f} s\n")

    def _stream(self):
        return self.stream if self.stream is not None else sys.stderr

    @staticmethod
    def _write(stream, text):
        stream.write(text)
        stream.flush()


class OptimizationCounter:
    """A tqdm bar over the optimizations for ``progress(done, total)`` callbacks.

    Parameters
    ----------
    stream : file, optional
        Where to write (default: ``sys.stderr`` at the time of writing).
    enabled : bool, optional
        Display or not; default: when ``stream`` is a terminal.
    """

    def __init__(self, stream=None, enabled=None):
        self.stream = stream
        self.enabled = enabled
        self._bar = None

    def __call__(self, done, total):
        stream = self.stream if self.stream is not None else sys.stderr
        if not _shown(stream, self.enabled):
            return
        if self._bar is None:
            self._bar = tqdm(total=total, file=stream, desc="optimizations", unit="opt",
                             dynamic_ncols=True)
        self._bar.update(done - self._bar.n)
        if done >= total:
            self._bar.close()
            self._bar = None
