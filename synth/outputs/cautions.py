"""The safety cautions that travel with every design handed to a person.

One place for the words: the terminal table and the design JSON carry
:data:`CAUTION`, the report opens with :data:`CAUTIONS`; the coming exports
(C, Structured Text) and written requirement files take theirs from here.
"""

from __future__ import annotations

__all__ = ["CAUTION", "CAUTIONS"]

#: One paragraph: the terminal's last word and the design JSON's ``caution``.
CAUTION = ("These designs rest on a linear model. Verify them against actuator saturation, "
           "delays, sampling and nonlinearity, commission with reduced gains and hardware "
           "limits in place, and follow local codes, functional-safety standards and licensed "
           "engineering practice.")

#: The same, point by point, at the top of every report.
CAUTIONS = (
    "Every design here comes from a linear model of the plant. The real machine is not that "
    "model.",
    "Before any design goes near hardware, verify it against a model with actuator saturation, "
    "measurement and computation delay, and the plant's nonlinearities.",
    "Commission with reduced gains first, with hardware limits (current, travel, speed, "
    "temperature) and an independent way to stop the machine in place.",
    "Follow local codes, the functional-safety standards that apply to the machine, and licensed "
    "engineering practice; this report does not replace them.",
)
