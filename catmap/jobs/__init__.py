"""The jobs: each composes the stages for one thing a user asks catmap to do.

In the order a feed goes through catmap:

- :mod:`~catmap.jobs.init`: a project of one's own started (its tree, brand list, labelled feeds).
- :mod:`~catmap.jobs.inspect`: what a feed is and which column feeds which field (its profile).
- :mod:`~catmap.jobs.normalize`: a feed cleaned into products, rejects and the accounting.
- :mod:`~catmap.jobs.brands`: unknown brand names that repeat in a feed; a brand added.
- :mod:`~catmap.jobs.train`: the mapping model trained (the project's labelled feeds, the demo's
  catalog in the demo's project, or a remapped catalog).
- :mod:`~catmap.jobs.map`: a feed mapped to files with the project's model and rules.
- :mod:`~catmap.jobs.cluster`: a feed mapped over the workers of a dask.distributed cluster.
- :mod:`~catmap.jobs.evaluate`: a labelled feed mapped, measured, and its report written.
- :mod:`~catmap.jobs.onboard`: a feed read, mapped, decided and stored, the rest queued.
- :mod:`~catmap.jobs.status`: where each feed of a project stands.
- :mod:`~catmap.jobs.review`: a review session on the project's store.
- :mod:`~catmap.jobs.audit`: each feed's audited error fed back into its threshold.
- :mod:`~catmap.jobs.decisions`: the review queue as a CSV, and its filled rows back.
- :mod:`~catmap.jobs.export`: the enriched feed written out.
- :mod:`~catmap.jobs.remap`: the stored mappings moved to a new tree version.
- :mod:`~catmap.jobs.demo`: the whole job on the invented demo world.

Modules starting with ``_`` hold a job's helpers. Each job imports the stages it needs; import
the job's module itself (the stages load the model code, which takes a moment).
"""

from __future__ import annotations
