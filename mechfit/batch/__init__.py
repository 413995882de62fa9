"""Batch evaluation of many candidate schemes: enumeration, executors, result store."""

from mechfit.batch.equivalence import merge_equivalent, rate_law_structure
from mechfit.batch.executors import open_executor
from mechfit.batch.runner import BatchEvent, Task, run_batch, run_to_end
from mechfit.batch.schemes import Scheme, enumerate_schemes, scheme_text
from mechfit.batch.store import ResultStore, content_key

__all__ = ["BatchEvent", "ResultStore", "Scheme", "Task", "content_key", "enumerate_schemes",
           "merge_equivalent", "open_executor", "rate_law_structure", "run_batch", "run_to_end",
           "scheme_text"]
