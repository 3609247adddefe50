"""The spread's allocator setting (chainbudget/spread/heap.py): it takes on glibc, and what
it sets is what mallopt(3) documents."""

from __future__ import annotations

import platform
import subprocess
import sys

import pytest

from chainbudget.spread import heap


@pytest.mark.skipif(
    not sys.platform.startswith("linux") or platform.libc_ver()[0] != "glibc",
    reason="mallopt is glibc's",
)
def test_glibc_takes_the_setting_and_keeps_freed_pages() -> None:
    # In a fresh process: blocks like a batch's (twelve of 8 MiB and fifty of 160 kB) made,
    # freed and made again. Once the heap keeps its memory they land on pages it already
    # holds: no new page faults (getrusage's ru_minflt, POSIX). Without the setting glibc
    # trims the top of its heap once more than twice its mapping threshold is free there
    # (at most 64 MiB; mallopt(3)), so each round faults its blocks in anew: the control
    # shows the count this test would see if the setting did nothing.
    script = """
import resource, sys
import numpy as np
from chainbudget.spread.heap import keep_freed_memory
if sys.argv[1] == "keep":
    assert keep_freed_memory()
def faults_of_a_round():
    before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
    blocks = [np.ones(1 << 20) for _ in range(12)] + [np.ones(20_000) for _ in range(50)]
    del blocks
    return resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before
for _ in range(3):  # the heap settles on its size within a round or two
    faults_of_a_round()
print(faults_of_a_round())
"""

    def faults(mode: str) -> int:
        run = [sys.executable, "-c", script, mode]
        return int(subprocess.run(run, capture_output=True, text=True, check=True).stdout)

    # 96 MiB is some 24,000 pages of 4 KiB: thousands faulted each round without it
    assert faults("plain") > 1000
    assert faults("keep") < 50


def test_setting_is_within_mallopt_s_int_range() -> None:
    # mallopt takes a C int: the values must fit one
    assert 0 < heap.TRIM_THRESHOLD < 2**31
    assert 0 < heap.TOP_PAD < 2**31
    # glibc refuses a mapping threshold above half its largest heap, 32 MiB on 64 bits
    assert 0 < heap.MMAP_THRESHOLD <= 32 << 20
