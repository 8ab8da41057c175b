"""Checkpoints: finished work of every job of a workflow, saved as the run goes.

A :class:`Checkpoint` is one ``.npz`` file (no pickles) holding, for each job of
a workflow (the audit; the two models of a comparison; every phase of advise),
its fingerprint (what its numbers depend on: design, laws, estimator, groups
and the model's identity, not how rows are split into tasks), the row ranges
finished per randomization and the merged sums. The same command run again
resumes: finished jobs are not evaluated again, a job cut short continues with
the rows it is missing.

Saving honours an interval (at most once every ``interval`` seconds, and at
the end of each job and when a run fails or is interrupted), writes a
temporary file in the same folder and renames it, so a kill during a write
leaves the previous checkpoint intact. Merging a task's sums and marking it
done happen with interrupts deferred, so a task is never counted twice. A
lock file keeps two runs off one checkpoint; loading checks that the sums
agree with the finished row ranges, and that every job's arrays still hash to
the SHA-256 consistency record written with them (an edited or damaged value
is refused, not resumed).
"""

from __future__ import annotations

import contextlib
import glob
import hashlib
import itertools
import json
import math
import os
import signal
import threading
import time
import zipfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np

from .engine import Job, JobRecord, Task
from .errors import UserError

__all__ = ["FORMAT", "Checkpoint", "recorded_seed"]

#: Written into every checkpoint; a file of another format is refused.
FORMAT = "netdim checkpoint 2"
#: Largest uncompressed size of a checkpoint netdim reads (checked before decompressing).
MAX_BYTES = 8 << 30
#: Lock files this process holds (a second Checkpoint on the same file in this process is refused too).
_HELD: set[str] = set()


def _digest(arrays: dict[str, np.ndarray], prefix: str) -> str:
    """SHA-256 of every array of one job (name, dtype, shape and bytes), its consistency record aside."""
    h = hashlib.sha256()
    for key in sorted(k for k in arrays if k.startswith(prefix) and k != prefix + "check"):
        value = np.ascontiguousarray(arrays[key])
        h.update(f"{key}|{value.dtype.str}|{value.shape}|".encode())
        h.update(value.tobytes())
    return h.hexdigest()


@contextlib.contextmanager
def _deferred_interrupts() -> Iterator[None]:
    """Hold SIGINT / SIGTERM until the block ends (main thread); elsewhere run plainly.

    The signals are caught by handlers of this block and raised again, to the handlers
    in place before, when it ends. (Blocking them with a thread signal mask is not enough:
    the process may have other threads, such as a runtime's thread pool, and a signal
    sent to the process reaches any thread that does not block it.)
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    caught: list[int] = []
    held = (signal.SIGINT, signal.SIGTERM)
    previous = {sig: signal.signal(sig, lambda signum, _frame: caught.append(signum)) for sig in held}
    try:
        yield
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, signal.SIG_DFL if handler is None else handler)
        for sig in dict.fromkeys(caught):
            signal.raise_signal(sig)


def _differences(saved: dict[str, Any], current: dict[str, Any]) -> list[str]:
    out = []
    for key in sorted(set(saved) | set(current)):
        a, b = saved.get(key, "(absent)"), current.get(key, "(absent)")
        if a != b:
            show = lambda v: (json.dumps(v)[:60] + "…") if len(json.dumps(v)) > 60 else json.dumps(v)  # noqa: E731
            out.append(f"{key}: {show(a)} then, {show(b)} now")
    return out


class _SavedRecord(JobRecord):
    """A job's record that a checkpoint keeps and writes."""

    def __init__(self, job: Job, fingerprint: dict[str, Any]) -> None:
        super().__init__(job)
        self.fingerprint = fingerprint

    def add(self, task: Task, part: dict) -> None:
        with _deferred_interrupts():
            super().add(task, part)


class Checkpoint:
    """Finished work of a workflow's jobs in one file; see the module docstring.

    Parameters
    ----------
    path : str or Path
        The checkpoint file (``.npz``); its folder must exist.
    interval : float
        Least seconds between two saves while a job runs.

    Raises
    ------
    UserError
        When the folder does not exist, another run holds the checkpoint, or the file
        is not a readable netdim checkpoint.
    """

    def __init__(self, path: str | os.PathLike[str], interval: float = 30.0) -> None:
        self.path = Path(path)
        if not math.isfinite(interval) or interval < 0:
            raise UserError(f"`checkpoint_seconds` must be a number ≥ 0, got {interval!r}.")
        self.interval = float(interval)
        if not self.path.parent.is_dir():
            raise UserError(
                f"The folder of the checkpoint '{self.path}' does not exist. Create it first, or give "
                "a checkpoint path in an existing folder."
            )
        if self.path.is_dir():
            raise UserError(f"The checkpoint '{self.path}' is a folder; give a file path such as run.npz.")
        self.records: dict[str, _SavedRecord] = {}
        self.saves = 0
        self.failure: str | None = None
        self._last = -math.inf
        self._lock = self.path.with_name(self.path.name + ".lock")
        self._acquire()
        for stale in self.path.parent.glob(f".{glob.escape(self.path.name)}.*.tmp.npz"):
            with contextlib.suppress(OSError):  # half-written by a killed run: this run holds the lock now
                stale.unlink()
        try:
            self._saved = self._read()
        except BaseException:
            self.close()
            raise

    # -- lock -----------------------------------------------------------------------------

    def _acquire(self) -> None:
        for _ in range(2):
            try:
                fd = os.open(self._lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                try:
                    pid = int(self._lock.read_text().strip() or 0)
                except (OSError, ValueError):
                    pid = 0
                mine = pid == os.getpid() and str(self._lock.resolve()) in _HELD
                if mine or (pid and pid != os.getpid() and _alive(pid)):
                    raise UserError(
                        f"The checkpoint '{self.path}' is in use by another netdim run (process {pid}"
                        f"{', this one' if mine else ''}). "
                        "Wait for it to finish, or give this run another checkpoint path."
                    ) from None
                with contextlib.suppress(OSError):
                    self._lock.unlink()  # left by a run that is gone
                continue
            except OSError as exc:
                raise UserError(
                    f"The checkpoint '{self.path}' cannot be used: its lock file could not be created "
                    f"({exc.strerror or exc}). Give a checkpoint path in a writable folder."
                ) from exc
            with os.fdopen(fd, "w") as f:
                f.write(str(os.getpid()))
            _HELD.add(str(self._lock.resolve()))
            self._holding = True
            return
        raise UserError(f"The checkpoint lock '{self._lock}' could not be taken; remove it if no run is active.")

    def close(self) -> None:
        """Release the lock (the checkpoint file stays)."""
        if not getattr(self, "_holding", False):
            return
        self._holding = False
        with contextlib.suppress(OSError):
            _HELD.discard(str(self._lock.resolve()))
            if self._lock.exists() and self._lock.read_text().strip() == str(os.getpid()):
                self._lock.unlink()

    def __enter__(self) -> Checkpoint:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- reading ----------------------------------------------------------------------------

    def _bad(self, why: str) -> UserError:
        return UserError(
            f"The checkpoint '{self.path}' cannot be resumed: {why}. Delete it to start the run afresh, "
            "or give another checkpoint path."
        )

    def _read(self) -> dict[str, dict[str, Any]]:
        if not self.path.exists():
            return {}
        try:
            with zipfile.ZipFile(self.path) as archive:
                size = sum(info.file_size for info in archive.infolist())
            if size > MAX_BYTES:
                limit = f"netdim reads at most {MAX_BYTES >> 30} GiB"
                raise self._bad(f"it would expand to {size / 2**30:.1f} GiB ({limit})")
            with np.load(self.path, allow_pickle=False) as z:
                data = {k: z[k] for k in z.files}
        except UserError:
            raise
        except Exception as exc:
            raise self._bad(f"it is not a readable checkpoint ({type(exc).__name__}: {exc})") from exc
        if str(data.get("format", "")) != FORMAT:
            raise self._bad("it was not written by this version of netdim")
        try:
            names = json.loads(str(data["jobs"]))
            jobs: dict[str, dict[str, Any]] = {}
            for i, name in enumerate(names):
                prefix = f"j{i}/"
                fields: dict[str, dict[str, dict[str, np.ndarray]]] = {}
                for key, value in data.items():
                    if key.startswith(prefix + "s/"):
                        _, _, group, rep, field = key.split("/", 4)
                        fields.setdefault(group, {}).setdefault(rep, {})[field] = value
                jobs[str(name)] = {
                    "fingerprint": json.loads(str(data[prefix + "fingerprint"])),
                    "done": np.asarray(data[prefix + "done"], dtype=np.int64).reshape(-1, 3),
                    "sums": fields,
                    "check": str(data.get(prefix + "check", "")),
                    "intact": str(data.get(prefix + "check", "")) == _digest(data, prefix),
                }
        except (KeyError, ValueError, TypeError) as exc:
            raise self._bad(f"its contents are malformed ({type(exc).__name__}: {exc})") from exc
        return jobs

    def job(self, job: Job) -> _SavedRecord:
        """The record of ``job``: restored from the file when it was saved there, else empty."""
        fingerprint = json.loads(json.dumps(job.fingerprint()))
        record = _SavedRecord(job, fingerprint)
        saved = self._saved.get(job.name)
        if saved is not None:
            if saved["fingerprint"] != fingerprint:
                changed = "; ".join(_differences(saved["fingerprint"], fingerprint)[:4])
                raise UserError(
                    f"The checkpoint '{self.path}' belongs to a different run: for '{job.name}', {changed}. "
                    "Use the same model, inputs and options to resume, or another checkpoint path."
                )
            self._restore(record, saved)
        self.records[job.name] = record
        return record

    def _restore(self, record: _SavedRecord, saved: dict[str, Any]) -> None:
        job = record.job
        points, reps = job.design.points, job.design.replicates
        names = [g.name for g in job.groups]
        rows = np.zeros(reps, dtype=np.int64)
        spans: dict[int, list[tuple[int, int]]] = {}
        for rep, start, n in saved["done"]:
            if not (0 <= rep < reps and start >= 0 and n > 0 and start + n <= points):
                raise self._bad(f"a finished task (randomization {rep}, rows {start}..{start + n}) is out of range")
            spans.setdefault(int(rep), []).append((int(start), int(n)))
            rows[rep] += n
        for rep, ranges in spans.items():
            ranges.sort()
            if any(a + m > b for (a, m), (b, _) in itertools.pairwise(ranges)):
                raise self._bad(f"finished rows of randomization {rep + 1} overlap")
        for gi, name in enumerate(names):
            by_rep = saved["sums"].get(str(gi), {})
            for rep in range(reps):
                state = by_rep.get(str(rep))
                if state is None:
                    if rows[rep]:
                        raise self._bad(f"the sums of '{name}' for randomization {rep + 1} are missing")
                    continue
                try:
                    sums = job.estimator.restore(state)
                except Exception as exc:
                    raise self._bad(f"the sums of '{name}' are malformed ({type(exc).__name__})") from exc
                if sums.rows != rows[rep]:
                    raise self._bad(
                        f"the sums of '{name}' for randomization {rep + 1} hold {sums.rows} rows but "
                        f"{rows[rep]} are recorded as finished"
                    )
                record.sums[name][rep] = sums
        if not saved["intact"]:
            raise self._bad(
                f"the sums or finished rows of '{job.name}' do not match the consistency record written with "
                "them (the file was edited or damaged)"
            )
        record.done = [Task(int(r), int(s), int(n)) for r, s, n in saved["done"]]
        record.rows_done = int(rows.sum())

    # -- writing ----------------------------------------------------------------------------

    def save_if_due(self) -> None:
        """Save when ``interval`` seconds have passed since the last save (the first finished task saves at once)."""
        if time.monotonic() - self._last >= self.interval:
            self.save()

    def save(self) -> None:
        """Write every job's finished work (atomically; a failed write keeps the previous file)."""
        jobs = {**{k: None for k in self._saved}, **self.records}
        arrays: dict[str, np.ndarray] = {"format": np.array(FORMAT), "jobs": np.array(json.dumps(list(jobs)))}
        for i, name in enumerate(jobs):
            prefix = f"j{i}/"
            record = self.records.get(name)
            if record is None:  # saved by an earlier run, not (yet) used by this one: keep it as it was
                saved = self._saved[name]
                arrays[prefix + "fingerprint"] = np.array(json.dumps(saved["fingerprint"]))
                arrays[prefix + "done"] = saved["done"]
                for gi, reps in saved["sums"].items():
                    for rep, state in reps.items():
                        for field, value in state.items():
                            arrays[f"{prefix}s/{gi}/{rep}/{field}"] = value
                arrays[prefix + "check"] = np.array(saved["check"])  # kept as read: never re-signed
                continue
            arrays[prefix + "fingerprint"] = np.array(json.dumps(record.fingerprint))
            arrays[prefix + "done"] = np.array([(t.rep, t.start, t.n) for t in record.done], dtype=np.int64).reshape(
                -1, 3
            )
            for gi, g in enumerate(record.job.groups):
                for rep, sums in enumerate(record.sums[g.name]):
                    if sums is not None:
                        for field, value in sums.state().items():
                            arrays[f"{prefix}s/{gi}/{rep}/{field}"] = value
            arrays[prefix + "check"] = np.array(_digest(arrays, prefix))
        tmp = self.path.with_name(f".{self.path.name}.{os.getpid()}.tmp.npz")
        try:
            with open(tmp, "wb") as f:
                np.savez(f, **arrays)
                f.flush()
                os.fsync(f.fileno())
            os.replace(tmp, self.path)
        except OSError as exc:
            with contextlib.suppress(OSError):
                tmp.unlink()
            self.failure = f"{exc.strerror or exc}"
        else:
            self.saves += 1
            self.failure = None
        self._last = time.monotonic()


def recorded_seed(path: str | os.PathLike[str]) -> int | None:
    """The root seed of the run a checkpoint belongs to (its first job's), or None when there is none.

    A run started without a seed draws one; the same command resumes with the seed
    recorded here instead of drawing another.
    """
    p = Path(path)
    if not p.is_file():
        return None
    try:
        with zipfile.ZipFile(p) as archive:
            if sum(info.file_size for info in archive.infolist()) > MAX_BYTES:
                return None
        with np.load(p, allow_pickle=False) as z:
            if str(z["format"]) != FORMAT:
                return None
            return int(json.loads(str(z["j0/fingerprint"]))["seed"])
    except Exception:  # an unreadable checkpoint is reported when the run opens it
        return None


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True
