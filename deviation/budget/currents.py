"""The plan's currents split as the budget splits them, written once.

Circuits that switch with the states carry the state's current; circuits that switch on their
own (a windlass, a thruster, a radio transmitting) may be on or off (or reversed) on top of any
state, and the budget takes their worst combination. Every figure that needs currents (the held
figure, the total-field error, each run's own figure, the electronic-sensor figures) reads them
from :class:`CircuitCurrents`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class CircuitCurrents:
    """A plan's currents, split as the budget uses them.

    Attributes
    ----------
    matrix : (R, C)
        1 where run r carries circuit c.
    currents_a : (C, K) [A]
        Every circuit's current in every state.
    independent : (C,) bool
        Circuits that switch on their own.
    reversing : (Ci,) bool
        Of the independent circuits, those that may run either way round.
    names : tuple of str
        The independent circuits' names, in order.
    base_a : (R, K) [A]
        Each run's current from the circuits that switch with the states.
    on_a : (R, K) [A]
        Each run's current from its independent circuits, all on, as sizes (a bound's scale).
    """

    matrix: np.ndarray
    currents_a: np.ndarray
    independent: np.ndarray
    reversing: np.ndarray
    names: tuple[str, ...]
    base_a: np.ndarray
    on_a: np.ndarray

    @property
    def incidence(self) -> np.ndarray:
        """(R, Ci) which runs carry each independent circuit."""
        return self.matrix[:, self.independent]

    @property
    def switched_a(self) -> np.ndarray:
        """(Ci, K) [A] each independent circuit's current in each state, when on."""
        return self.currents_a[self.independent]

    def scale_a(self, reference: int | None = None) -> np.ndarray:
        """(R, K) [A] the current that scales each run's parts of unknown direction: its current
        with every independent circuit on, or, for a sensor adjusted in state ``reference``, the
        change of its current from that state (the cable does not move between states)."""
        if reference is None:
            return np.abs(self.base_a) + self.on_a
        return np.abs(self.base_a - self.base_a[:, reference:reference + 1]) + self.on_a

    def run_currents_a(self, combination: np.ndarray) -> np.ndarray:
        """(R, K) [A] each run's current with the independent circuits switched as
        ``combination`` (K, Ci) says (1 on, 0 off, -1 reversed)."""
        switched = self.switched_a.T * combination                           # (K, Ci)
        return self.base_a + self.incidence @ switched.T

    def switched_fields(self, unit_t: np.ndarray) -> np.ndarray:
        """(P, K, Ci, 3) each independent circuit's field in each state, from the runs' fields
        per ampere ``unit_t`` (P, R, 3)."""
        circuit_unit = np.einsum("prj,rc->pcj", unit_t, self.incidence)        # (P, Ci, 3)
        return circuit_unit[:, None, :, :] * self.switched_a.T[None, :, :, None]


def circuit_currents(plan) -> CircuitCurrents:
    """The currents of a plan, split as the budget uses them."""
    matrix = plan.circuit_matrix
    currents = plan.circuit_currents_a
    independent = plan.independent
    reversing = np.array([c.reversing for c in plan.circuits if c.independent], dtype=bool)
    names = tuple(c.name for c in plan.circuits if c.independent)
    base_a = matrix @ (currents * ~independent[:, None])
    on_a = matrix[:, independent] @ np.abs(currents[independent])
    return CircuitCurrents(matrix, currents, independent, reversing, names, base_a, on_a)
