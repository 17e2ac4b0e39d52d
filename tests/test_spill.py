"""The scan's spill list: what it holds in memory is bounded, and it gives back every item,
in order, from its temporary file."""

from __future__ import annotations

import pickle

import pytest

from capture.models import EntrySummary
from capture.spill import Spill


def test_a_spill_gives_back_every_item_in_order_and_holds_one_block_in_memory():
    items = [EntrySummary(path=f"run-{i}.md", status="ok", e_factor=i / 7) for i in range(23)]
    spill = Spill(block=5)
    spill.extend(items)
    assert len(spill) == 23 and list(spill) == items and list(spill) == items  # twice
    assert len(spill._tail) == 3 and len(spill._offsets) == 4  # 4 blocks of 5 on disk
    assert spill[0] == items[0] and spill[7] == items[7] and spill[-1] == items[22]
    assert spill[20] == items[20]  # the tail
    with pytest.raises(IndexError):
        spill[23]
    assert spill == items and spill != items[:-1]
    paths = spill.view(lambda s: s.path)
    assert list(paths) == [s.path for s in items] and len(paths) == 23
    assert list(paths) == list(paths)  # readable more than once, unlike a generator
    spill.close()
    assert spill._file is None


def test_a_small_spill_opens_no_file_and_a_block_on_disk_is_a_pickle_of_its_items():
    spill = Spill(["a", "b"], block=3)
    assert spill._file is None and spill == ["a", "b"]
    spill.append("c")  # the first full block goes to the file
    spill._file.seek(spill._offsets[0])
    assert pickle.load(spill._file) == ["a", "b", "c"] and spill._tail == []
