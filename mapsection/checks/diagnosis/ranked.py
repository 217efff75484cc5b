"""What every measurement behind a diagnosis shares: a dimensionless strength to rank it
by, written beside its figures in checks.json."""

from __future__ import annotations

from dataclasses import asdict

__all__ = ["Ranked"]


class Ranked:
    """Mixin of the diagnosis' dataclasses: ``strength`` ranks the causes (larger is
    stronger); ``to_dict`` gives the fields and the strength."""

    @property
    def strength(self) -> float:
        raise NotImplementedError

    def to_dict(self) -> dict:
        return {**asdict(self), "strength": self.strength}
