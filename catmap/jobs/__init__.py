"""The jobs: each composes the stages for one thing a user asks catmap to do.

- :mod:`~catmap.jobs.onboard`: a feed read, mapped, decided and stored, the rest queued.
- :mod:`~catmap.jobs.status`: where each feed of a project stands.
- :mod:`~catmap.jobs.remap`: the stored mappings moved to a new tree version.
- :mod:`~catmap.jobs.export`: the enriched feed written out.
- :mod:`~catmap.jobs.decisions`: the review queue as a CSV, and its filled rows back.
- :mod:`~catmap.jobs.demo`: the whole job on the invented demo world.

Each job imports the stages it needs; import the job's module itself (the stages load the
model code, which takes a moment).
"""

from __future__ import annotations
