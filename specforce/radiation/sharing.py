"""Which optical depths the states of one column share.

States of the same air (the same levels and temperatures) differ only in some gases' amounts.
A gas whose amounts every state has is summed once for all of them; a gas in an amount that
some of the states share (the base amount, in a set of states that each change another gas)
once for those states; every other gas for each state alone. A state's optical depth is the
sum of its three parts.
"""

from __future__ import annotations

from dataclasses import dataclass

from .column import Absorbers

__all__ = ["StateAbsorbers", "share_absorbers"]


@dataclass
class StateAbsorbers:
    """The absorbers of several states of one column, each computed once."""

    shared: Absorbers   # the gases whose amounts are the same in every state
    own: list           # per state: the gases in amounts no other state has
    groups: list        # one gas each, in an amount that some (not all) of the states share
    members: list       # per state: the indices of its groups

    @property
    def everyone(self):
        """Every absorber, each once."""
        return [self.shared, *self.own, *self.groups]


def share_absorbers(columns, spectroscopy, settings):
    """The :class:`StateAbsorbers` of ``columns`` (Column, one per state) under ``settings``.

    Where the states are not of the same air, each state has all its gases alone. With two
    states, a gas either has the same amounts in both or is each one's own, so no groups form.
    """
    first = columns[0]
    same_air = all(first.same_air(c) for c in columns[1:])
    common = [g for g in first.gases if all(first.same_gas(c, g) for c in columns[1:])] if same_air else []
    groups, members = [], [[] for _ in columns]
    grouped = [set() for _ in columns]
    for g in first.gases if same_air else ():
        if g in common:
            continue
        left = list(range(len(columns)))
        while left:
            k = left.pop(0)
            alike = [m for m in left if columns[k].same_gas(columns[m], g)]
            if not alike:
                continue
            left = [m for m in left if m not in alike]
            group = Absorbers(columns[k], spectroscopy, [g], settings, columns[k].continuum and g == "H2O")
            for m in (k, *alike):
                grouped[m].add(g)
                if not group.empty:  # a gas without lines in the range adds nothing
                    members[m].append(len(groups))
            if not group.empty:
                groups.append(group)
    shared = Absorbers(first, spectroscopy, common, settings, first.continuum and "H2O" in common)
    own = [Absorbers(c, spectroscopy, [g for g in c.gases if g not in common and g not in mine], settings,
                     c.continuum and "H2O" not in common and "H2O" not in mine)
           for c, mine in zip(columns, grouped)]
    return StateAbsorbers(shared, own, groups, members)
