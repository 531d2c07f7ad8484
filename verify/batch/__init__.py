"""Checking a whole job folder: every case in it, in parallel, with one summary.

    jobs     which cases a folder (or a manifest CSV) holds, and why a row cannot run
    worker   one case checked in-process, by the library; returns plain data
    state    the hashes of each case's inputs, so a rerun skips what has not changed
    summary  the summary CSV and the HTML index, rendered from the results
    run      the folder job: skip, run (process pool or Dask), write outputs, the batch status
    cluster  the same job on Dask's distributed scheduler (optional extra `cluster`)

The library is silent: progress goes to a callback the command line prints from.
"""

from __future__ import annotations
