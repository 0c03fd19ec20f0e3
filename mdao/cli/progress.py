"""Progress display of the command line, on stderr.

The studies report progress through plain callbacks and print nothing; these are the callbacks
the commands hand them:

- :class:`StepDisplay`, ``display(step, done, total)`` (:func:`mdao.studies.review.run_review`):
  a line when a step starts, a line with its wall time when it ends, and for steps made of many
  units (the re-optimizations) a text bar, redrawn on a terminal, drawn once at the end elsewhere.
- :class:`OptimizationCounter`, ``counter(done, total)``
  (:func:`mdao.studies.scaleout.optimize_many`): one line per finished optimization.
"""
import sys
import time


class StepDisplay:
    """Step lines and a small text bar for ``progress(step, done, total)`` callbacks.

    The study calls ``progress(step, 0, total)`` when a step starts, ``progress(step, total,
    total)`` when it ends and, for a step of ``total > 1`` units, ``progress(step, done, total)``
    after each unit in between.

    Parameters
    ----------
    prefix : str
        Start of every line (``"review"``).
    stream : file, optional
        Where to write (default: ``sys.stderr`` at the time of writing).
    width : int
        Characters of the bar.
    """

    def __init__(self, prefix, stream=None, width=30):
        self.prefix = prefix
        self.stream = stream
        self.width = width
        self._t0 = time.perf_counter()

    def __call__(self, step, done, total):
        if done == 0:
            self._t0 = time.perf_counter()
            self._write(f"{self.prefix}: {step} ...\n")
            return
        if total > 1:
            self._bar(done, total)
        if done >= total:
            self._write(f"{self.prefix}: {step} done in {time.perf_counter() - self._t0:.2f} s\n")

    def _bar(self, done, total):
        stream = self._stream()
        if getattr(stream, "isatty", lambda: False)() or done >= total:
            filled = int(self.width * done / max(total, 1))
            self._write(f"\r  [{'#' * filled}{'.' * (self.width - filled)}] {done}/{total}"
                        + ("\n" if done >= total else ""))

    def _stream(self):
        return self.stream if self.stream is not None else sys.stderr

    def _write(self, text):
        stream = self._stream()
        stream.write(text)
        stream.flush()


class OptimizationCounter:
    """``optimize_many: k/N done (t s)`` lines for ``progress(done, total)`` callbacks.

    The clock starts at ``progress(0, total)`` (the start of the optimizations), or at
    construction when that call never comes.

    Parameters
    ----------
    stream : file, optional
        Where to write (default: ``sys.stderr`` at the time of writing).
    """

    def __init__(self, stream=None):
        self.stream = stream
        self._t0 = time.perf_counter()

    def __call__(self, done, total):
        if done == 0:
            self._t0 = time.perf_counter()
            return
        print(f"optimize_many: {done}/{total} done ({time.perf_counter() - self._t0:.1f} s)",
              file=self.stream if self.stream is not None else sys.stderr, flush=True)
