"""Crash safety: SIGKILL at random moments, a full disk, an unwritable output folder."""

from __future__ import annotations

import errno
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from infer.errors import ChainError, InferError
from infer.inference.chainfile import read_chain

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
import gaussian_target as gt  # noqa: E402

N_KILLS = 20


def _wait_for_progress(path, beyond, proc, timeout=60.0):
    deadline = time.time() + timeout
    while time.time() < deadline and proc.poll() is None:
        try:
            if read_chain(path).iteration > beyond:
                return
        except ChainError:
            pass
        time.sleep(0.05)


@pytest.mark.slow
def test_random_sigkills_always_leave_a_chain_that_resumes(tmp_path):
    """20 runs, each killed with SIGKILL at a random moment and resumed by the next one.

    After every kill the file must be readable (or absent if the kill came before the first
    checkpoint) and must start with everything the previous kill left; at the end the chain
    must equal, step for step, an uninterrupted run with the same seed.
    """
    path = tmp_path / "chain.h5"
    env = dict(os.environ, PYTHONPATH=str(HERE.parent) + os.pathsep + str(HERE))
    rng = np.random.default_rng(20261201)
    saved = None
    survived = 0
    for k in range(N_KILLS):
        args = [sys.executable, str(HERE / "gaussian_target.py"), str(path), "100000"]
        if path.exists():
            args.append("resume")
        proc = subprocess.Popen(args, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        if k % 5 == 4:
            # every fifth kill lands during start-up (imports, MAP search, file creation)
            time.sleep(float(rng.uniform(0.0, 1.5)))
        else:
            # the others land at a random moment once the run is sampling and checkpointing
            _wait_for_progress(path, saved.iteration if saved is not None else 0, proc)
            time.sleep(float(rng.uniform(0.0, 1.0)))
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        if not path.exists():
            assert saved is None   # killed before the first checkpoint: nothing to lose
            continue
        now = read_chain(path)      # must not raise: the file is always complete
        if saved is not None:
            assert now.iteration >= saved.iteration
            assert np.array_equal(now.chain[: saved.iteration], saved.chain)
        saved = now
        survived += 1
    assert saved is not None and saved.iteration > 0
    assert survived >= N_KILLS // 2
    assert saved.iteration > 0
    final = gt.run(path, max_steps=saved.iteration + 50, resume=True, tau_factor=1e9)
    reference = gt.run(tmp_path / "ref.h5", max_steps=saved.iteration + 50, tau_factor=1e9)
    assert np.array_equal(final.chain.chain, reference.chain.chain)


def test_full_disk_keeps_the_saved_chain(tmp_path, monkeypatch):
    """ENOSPC while writing a checkpoint: a clear error; the chain saved so far is intact."""
    path = tmp_path / "chain.h5"
    gt.run(path, max_steps=100, check_every=50)
    before = read_chain(path)

    import infer.inference.chainfile as cf

    def full(*a, **k):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(cf.shutil, "copyfile", full)
    with pytest.raises(ChainError, match="No space left on device.*intact"):
        gt.run(path, max_steps=200, check_every=50, resume=True)
    monkeypatch.undo()
    after = read_chain(path)
    assert np.array_equal(after.chain, before.chain)
    assert not path.with_name("chain.h5.partial").exists()
    # and the run can be continued once space is back
    res = gt.run(path, max_steps=200, check_every=50, resume=True)
    assert res.chain.iteration == 200


def test_unwritable_output_folder_is_a_clear_error(tmp_path):
    from infer.outputs.files import atomic_write_text
    from infer.outputs.fitfolder import FitFolder

    blocker = tmp_path / "a_file"
    blocker.write_text("x")
    with pytest.raises(InferError, match="cannot create the folder"):
        FitFolder(blocker / "out").prepare(run_hash="h", resume=False)
    with pytest.raises(InferError, match="cannot write"):
        atomic_write_text(blocker / "summary.md", "text")
    assert blocker.read_text() == "x"
