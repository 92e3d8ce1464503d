"""The decide stage: mappings with a calibrated confidence in, accepted or queued out.

Input: confidences of held-out labelled products, and the candidates of one onboarding run.
Output: the accept threshold for a stated error rate (Learn-then-Test) and the review-queue plan
(retailer-category groups, expected gain, audit sample).

- :mod:`~catmap.decide.threshold`: the accept threshold and the error estimate of an audit.
- :mod:`~catmap.decide.queue`: the review order and the audit slice.
- :mod:`~catmap.decide.audit`: whether a feed's audited error is over its target, and the
  threshold to raise it to.
"""

from __future__ import annotations

from catmap.decide.queue import Candidate, QueuePlan, plan_queue
from catmap.decide.threshold import ThresholdChoice, choose_threshold, estimate_error

__all__ = [
    "Candidate",
    "QueuePlan",
    "ThresholdChoice",
    "choose_threshold",
    "estimate_error",
    "plan_queue",
]
