"""Batch pre-marking of many records (Dask) and the worklist's listing of them (no Qt here).

- ``runner.run_batch(paths, workers=, scheduler=, force=, progress=)``: automatic marks for every
  record, stored in each sidecar through the marks store; resumable, one bad record never stops
  a batch.
- ``task.process_record(path, force)``: one record's step; ``task.process_records(paths,
  force)``: a chunk of them on one worker, each sidecar write overlapping the next analysis.
- ``summary``: the labelled listing cache stored beside the marks; ``summary_csv``: the batch
  summary file; ``listing``: worklist rows; ``sidecar_adapter``: the one place all of this
  touches ``reviewapp.core.marks``.
"""
