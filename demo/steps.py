"""The steps of the demo, in the order of the path of the data.

Each step takes the shared ``state`` dict (``out`` folder, ``files`` written,
and what earlier steps left there) and a stream for progress lines.
"""

from __future__ import annotations

from demo.evidence import evidence_step
from demo.interpretations import interpretations_step
from demo.order import order_step
from demo.record import record_step
from demo.run_outputs import outputs_step
from demo.runs import model_step

STEPS = [record_step, order_step, evidence_step, interpretations_step, model_step, outputs_step]
