"""Scaling a formula to a batch and rounding each mass to the balance that weighs it.

A line is weighed on the finest balance that can carry it (a lab keeps a fine balance for small
additions and a coarse one for the water); its mass is rounded half-up to that balance's
resolution, so the rounding of each line is at most half a resolution and the batch total is off
by at most the sum of those halves. Masses in grams throughout.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import ROUND_HALF_UP, Decimal

MIN_RESOLUTION_G = 1e-6  # a microbalance reads 0.001 mg; finer is no balance (and no
# decimal quantum the rounding can work with)
MAX_CAPACITY_G = 1e8  # 100 t: the largest batch a weigh sheet is made for


@dataclass(frozen=True)
class Balance:
    """A balance: the smallest step it reads (g) and the most it carries (g)."""

    resolution_g: float
    capacity_g: float

    def __post_init__(self) -> None:
        if not (math.isfinite(self.resolution_g) and self.resolution_g >= MIN_RESOLUTION_G):
            raise ValueError(f"balance resolution must be at least {MIN_RESOLUTION_G:g} g (a "
                             f"microbalance), got {self.resolution_g:g}")
        if not (math.isfinite(self.capacity_g) and self.capacity_g > self.resolution_g):
            raise ValueError(f"balance capacity must exceed its resolution, got "
                             f"{self.capacity_g:g} g")
        if self.capacity_g > MAX_CAPACITY_G:
            raise ValueError(f"balance capacity must be at most {MAX_CAPACITY_G:g} g (the "
                             f"largest batch), got {self.capacity_g:g} g")


# A bench of three balances (rule of thumb for a cosmetic pilot lab; override per batch):
# 0.01 g up to 200 g, 0.1 g up to 4 kg, 1 g up to 60 kg.
DEFAULT_BALANCES: tuple[Balance, ...] = (
    Balance(0.01, 200.0), Balance(0.1, 4000.0), Balance(1.0, 60000.0))


@dataclass(frozen=True)
class Weighing:
    """One line's mass: as scaled, as weighed, on which balance and in how many portions."""

    target_g: float
    weighed_g: float
    balance: Balance
    portions: int  # > 1 when the mass exceeds every balance's capacity

    @property
    def rounding_g(self) -> float:
        return self.weighed_g - self.target_g

    @property
    def below_resolution(self) -> bool:
        """The mass rounds to nothing on its balance: it needs a premix or a finer balance."""
        return self.weighed_g == 0.0


def scaled_mass_g(percent: float, batch_g: float) -> float:
    """The mass of a line at ``percent`` % w/w in a batch of ``batch_g`` grams."""
    if not (math.isfinite(percent) and percent >= 0):
        raise ValueError(f"percent must be >= 0, got {percent}")
    if not (math.isfinite(batch_g) and batch_g > 0):
        raise ValueError(f"batch mass must be above 0 g, got {batch_g}")
    return percent / 100.0 * batch_g


def round_to_resolution(mass_g: float, resolution_g: float) -> float:
    """``mass_g`` rounded half-up to a multiple of ``resolution_g`` (decimal arithmetic, so
    2.675 g on a 0.01 g balance reads 2.68, not the binary float's 2.67)."""
    step = Decimal(repr(resolution_g))
    steps = (Decimal(repr(mass_g)) / step).quantize(Decimal(1), rounding=ROUND_HALF_UP)
    return float(steps * step)


def choose_balance(mass_g: float, balances: tuple[Balance, ...] = DEFAULT_BALANCES
                   ) -> tuple[Balance, int]:
    """The finest balance that carries ``mass_g``, and the portions to weigh it in (1 unless
    the mass exceeds every capacity; then the largest balance, in equal portions)."""
    if not balances:
        raise ValueError("no balance given")
    for balance in sorted(balances, key=lambda b: (b.resolution_g, b.capacity_g)):
        if mass_g <= balance.capacity_g:
            return balance, 1
    largest = max(balances, key=lambda b: b.capacity_g)
    return largest, math.ceil(mass_g / largest.capacity_g)


def weigh(mass_g: float, balances: tuple[Balance, ...] = DEFAULT_BALANCES) -> Weighing:
    """Choose the balance for ``mass_g`` and round the mass to its resolution."""
    balance, portions = choose_balance(mass_g, balances)
    return Weighing(target_g=mass_g, weighed_g=round_to_resolution(mass_g, balance.resolution_g),
                    balance=balance, portions=portions)


def rounding_bound_g(weighings: list[Weighing]) -> float:
    """The most the weighed total can differ from the scaled total: half a resolution a line."""
    return sum(w.balance.resolution_g / 2.0 for w in weighings)
