"""Element sets that several tasks carry: pickled once in the parent, read once per worker.

Every all-vs-all task holds the whole catalog, and a fleet chunk's secondaries go with each
of its time spans.  Pickled as plain lists, the parent wrote a 30,000-object catalog again
for every task (0.17 s each) and each worker read it again for every task (0.43 s each,
while its next task waited).  `Records` is an immutable sequence that keeps its own pickle:
the parent writes it once however many tasks share it, and a worker that has already read
the same bytes (same digest) takes the records it read then.  The bytes still travel with
every task, so any executor and any worker can run any task on its own.
"""

from __future__ import annotations

import hashlib
import pickle
from collections import OrderedDict

# records read in this process, by digest of their pickle; a few, so that a long-lived worker
# (a Dask cluster's) does not hold old catalogs
_READ: "OrderedDict[bytes, Records]" = OrderedDict()
KEEP_READ = 2
reads = 0           # how many pickles this process has read (the rest were found in _READ)


class Records(tuple):
    """A tuple of element sets that pickles as one cached byte string (see the module)."""

    _payload: tuple[bytes, bytes] | None = None

    def __reduce__(self):
        if self._payload is None:
            data = pickle.dumps(tuple(self), protocol=pickle.HIGHEST_PROTOCOL)
            self._payload = (hashlib.blake2b(data, digest_size=16).digest(), data)
        return (_read, self._payload)


def _read(digest: bytes, data: bytes) -> Records:
    global reads
    hit = _READ.get(digest)
    if hit is None:
        reads += 1
        hit = Records(pickle.loads(data))
        _READ[digest] = hit
        while len(_READ) > KEEP_READ:
            _READ.popitem(last=False)
    else:
        _READ.move_to_end(digest)
    return hit


__all__ = ["Records"]
