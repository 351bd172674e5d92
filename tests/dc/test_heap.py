"""The heap setting of batched solves: once per process, only for batches, and off on request."""

from __future__ import annotations

import os
import platform
import subprocess
import sys

import pytest

CODE = """
from symbias.dc.heap import keep_heap_headroom
print(keep_heap_headroom(10), keep_heap_headroom(1000), keep_heap_headroom(1000))
"""


def _run(env_value: str | None) -> list[str]:
    env = {k: v for k, v in os.environ.items() if k != "SYMBIAS_HEAP_PAD"}
    if env_value is not None:
        env["SYMBIAS_HEAP_PAD"] = env_value
    return subprocess.run([sys.executable, "-c", CODE], capture_output=True, text=True, env=env,
                          check=True).stdout.split()


@pytest.mark.skipif(platform.libc_ver()[0] != "glibc", reason="the setting exists only in glibc")
def test_set_once_for_a_batch():
    assert _run(None) == ["None", "True", "None"]


def test_turned_off_by_the_environment():
    assert _run("0") == ["None", "None", "None"]
