"""One screening from configuration to stored result: read inputs, screen, attach risk,
commit to the store.  Used by the CLI (`screen`, `run`) and by the TUI's background runs."""

from .inputs import Inputs, load_inputs
from .run import RunOutcome, execute, resolve_start

__all__ = ["Inputs", "load_inputs", "RunOutcome", "execute", "resolve_start"]
