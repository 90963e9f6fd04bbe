"""The rule-job wrapper: failure records, clean messages for user errors and a full disk."""

import errno
import json
from types import SimpleNamespace

import pyarrow as pa
import pytest

from spikevar.base import parquet_io
from spikevar.base.errors import SpikevarInputError
from spikevar.base.layout import ResultsLayout
from spikevar.pipeline.jobs import read_failure_record, rule_job


class Logs(list):
    """Snakemake's named log list, as far as the wrapper uses it."""

    def __init__(self, **named):
        super().__init__(named.values())
        self.named = named

    def get(self, key, default=None):
        return self.named.get(key, default)


def fake_job(tmp_path, rule="session_metrics", step="metrics", session="moss-s1"):
    logs = ResultsLayout(str(tmp_path)).session_logs(session, step)
    return SimpleNamespace(log=Logs(**logs), rule=rule, wildcards={"session": session}), logs


def test_success_leaves_no_failure_record(tmp_path):
    sm, logs = fake_job(tmp_path)
    (tmp_path / "logs" / "sessions" / "moss-s1").mkdir(parents=True)
    with open(logs["failure"], "w") as handle:  # a record from an earlier failed run
        json.dump({"reason": "old"}, handle)
    with rule_job(sm, step="metrics") as job:
        assert job is sm
    assert read_failure_record(logs["failure"]) is None


def test_input_error_is_recorded_with_session_step_and_reason(tmp_path, capsys):
    sm, logs = fake_job(tmp_path)
    with pytest.raises(SystemExit) as stop, rule_job(sm, step="metrics"):
        raise SpikevarInputError("The event table has no rows.", fix="add events",
                                 session="moss-s1")
    assert stop.value.code == 1
    record = read_failure_record(logs["failure"])
    assert record["session"] == "moss-s1" and record["rule"] == "session_metrics"
    assert record["step"] == "metrics" and record["kind"] == "input"
    assert "The event table has no rows." in record["reason"] and "add events" in record["reason"]
    log_text = open(logs["log"]).read()
    assert "Traceback" not in log_text and "no rows" in log_text


def test_disk_full_while_writing_parquet_names_the_output(tmp_path, monkeypatch):
    sm, logs = fake_job(tmp_path, rule="session_recovery_figure", step="recovery_figure")
    target = tmp_path / "sessions" / "moss-s1" / "units.parquet"

    class FullDisk:  # stands in for pyarrow's writer on a file system with no space left
        def __init__(self, *args, **kwargs):
            raise OSError("IOError: [Errno 28] No space left on device")

    monkeypatch.setattr(parquet_io.pq, "ParquetWriter", FullDisk)
    with pytest.raises(SystemExit), rule_job(sm, step="recovery_figure"):
        parquet_io.write_parquet_atomic(pa.table({"x": [1]}), target, metadata={})
    record = read_failure_record(logs["failure"])
    assert record["kind"] == "disk_full"
    assert record["reason"] == (f"no space left on device while writing {target}: "
                                "free space and rerun")
    assert "Traceback" not in open(logs["log"]).read()
    assert list(target.parent.iterdir()) == []  # no temporary file left behind


def test_disk_full_from_the_os_keeps_the_file_name(tmp_path):
    sm, logs = fake_job(tmp_path)
    with pytest.raises(SystemExit), rule_job(sm, step="metrics"):
        raise OSError(errno.ENOSPC, "No space left on device", "/data/out/figure.png")
    assert read_failure_record(logs["failure"])["reason"] == (
        "no space left on device while writing /data/out/figure.png: free space and rerun")


def test_a_bug_keeps_its_traceback_and_is_recorded_as_internal(tmp_path):
    sm, logs = fake_job(tmp_path)
    with pytest.raises(KeyError), rule_job(sm, step="metrics"):
        {}["missing"]
    record = read_failure_record(logs["failure"])
    assert record["kind"] == "internal" and "KeyError" in record["reason"]
    assert "Traceback" in open(logs["log"]).read()


def test_an_os_error_that_is_not_disk_full_is_a_bug(tmp_path):
    sm, logs = fake_job(tmp_path)
    with pytest.raises(PermissionError), rule_job(sm, step="metrics"):
        raise PermissionError(errno.EACCES, "Permission denied", "/x")
    assert read_failure_record(logs["failure"])["kind"] == "internal"
