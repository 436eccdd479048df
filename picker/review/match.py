"""A BOM line's part number found in the catalogue (`PartIndex.match`): exact
after normalising, then a known packaging suffix, then a fuzzy score computed
with rapidfuzz's batch function (`process.cdist`) over catalogue keys of a
similar length."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from picker.catalog.load import normalise_part
from picker.errors import UsageError

# Packaging and finish codes makers append to a part number: tape and reel, reel
# sizes, cut tape, bulk, lead-free. Compared after `normalise_part`.
PACKAGING_SUFFIXES = ("tr", "reel", "rl", "r7", "r13", "ct", "cut", "bulk", "tape", "pbf", "lf",
                      "nopb")
TAKE_AT = 95.0  # score (0-100) from which a match is taken as is
CONFIRM_AT = 80.0  # score from which it is taken but marked for the engineer to confirm
SUFFIX_SCORE = 98.0  # the catalogue part plus a known packaging suffix


@dataclass(frozen=True)
class Match:
    """How one BOM part number was found in the catalogue."""

    position: int  # row position in the catalogue DataFrame; -1: none
    score: float  # 0-100
    how: str  # 'exact', 'suffix', 'fuzzy', 'tail' or '' (none)
    status: str  # 'taken', 'confirm' or 'none'
    also: tuple[int, ...] = ()  # positions that score as well (ambiguous)

    @property
    def found(self) -> bool:
        return self.position >= 0


NO_MATCH = Match(-1, 0.0, "", "none")


class PartIndex:
    """The catalogue's part numbers, normalised once, for matching BOM lines.

    Score of a BOM part number b against a catalogue part number k, both
    normalised (case folded, everything but letters and digits dropped):

    - 100, 'exact': b == k.
    - 98, 'suffix': b is k followed by known packaging codes (`-TR`, `-REEL`...).
    - 'fuzzy': 100 x the optimal-string-alignment similarity,
      1 - d / max(len b, len k), where d counts insertions, deletions,
      substitutions and swaps of two neighbours, each as one edit. One wrong
      character in an 8-character part number scores 87.5; two score 75.
    - 'tail': where k is a prefix of b (an unknown suffix of t characters),
      the insertion-only similarity 1 - t / (len b + len k), so an unknown
      two-letter suffix on an 8-character part scores 88.9, not 80: an extra
      tail is weaker evidence of another part than a changed character.

    The best-scoring part is the match: taken from `take_at`, marked to
    confirm from `confirm_at`, none below. Two parts scoring the same are
    ambiguous: marked to confirm, with both named, even above `take_at`.
    """

    def __init__(self, parts) -> None:
        import pandas as pd

        raw = pd.Series(parts, dtype=object).astype(str)
        self.parts = raw.to_numpy()
        self.keys = raw.str.casefold().str.replace(r"[^0-9a-z]", "", regex=True).to_numpy()
        self.folded = raw.str.casefold().str.replace(r"\s+", "", regex=True).to_numpy()
        self.by_key: dict[str, list[int]] = {}
        for pos, key in enumerate(self.keys):
            if key:
                self.by_key.setdefault(key, []).append(pos)
        lengths = np.fromiter((len(k) for k in self.keys), dtype=np.int64, count=len(self.keys))
        order = np.argsort(lengths, kind="stable")
        self._sorted_pos = order
        self._sorted_len = lengths[order]
        self._sorted_keys = self.keys[order].tolist()

    def match(self, names: list[str], *, fuzzy: np.ndarray | None = None,
              take_at: float = TAKE_AT, confirm_at: float = CONFIRM_AT) -> list[Match]:
        """A Match for every name. `fuzzy` (bool per name, default all) says
        which names may be matched by score; the others only exactly or by suffix."""
        if not 0 <= confirm_at <= take_at <= 100:
            raise UsageError(f"thresholds must satisfy 0 <= confirm ({confirm_at:g}) <= take "
                             f"({take_at:g}) <= 100")
        out: list[Match] = [NO_MATCH] * len(names)
        pending: list[tuple[int, str, str]] = []
        for i, name in enumerate(names):
            key = normalise_part(name)
            if not key:
                continue
            hits = self.by_key.get(key)
            if hits:
                out[i] = self._pick(hits, name, 100.0, "exact", take_at)
                continue
            core = self._strip_suffixes(key)
            if core != key and core in self.by_key:
                out[i] = self._pick(self.by_key[core], name, SUFFIX_SCORE, "suffix", take_at)
                continue
            if fuzzy is None or fuzzy[i]:
                pending.append((i, key, core))
        if pending and confirm_at < 100:
            for i, m in self._fuzzy(pending, take_at, confirm_at).items():
                out[i] = m
        return out

    def _pick(self, hits: list[int], name: str, score: float, how: str, take_at: float) -> Match:
        if len(hits) > 1:  # 'QLB-4N60K' and 'QLB4N60K' are both catalogue parts
            folded = "".join(name.split()).casefold()
            same = [p for p in hits if self.folded[p] == folded]
            if len(same) == 1:
                return Match(same[0], score, how, "taken" if score >= take_at else "confirm")
            return Match(hits[0], score, how, "confirm", tuple(hits[1:]))
        return Match(hits[0], score, how, "taken" if score >= take_at else "confirm")

    @staticmethod
    def _strip_suffixes(key: str) -> str:
        for _ in range(3):  # '-TR-PBF': up to three codes
            for suffix in PACKAGING_SUFFIXES:
                if key.endswith(suffix) and len(key) - len(suffix) >= 4:
                    key = key[: -len(suffix)]
                    break
            else:
                break
        return key

    def _fuzzy(self, pending: list[tuple[int, str, str]], take_at: float, confirm_at: float
               ) -> dict[int, Match]:
        """Scores for the names not found exactly: the name as written and with
        its packaging codes removed are both scored; the better one counts."""
        from rapidfuzz import process
        from rapidfuzz.distance import OSA

        cutoff = confirm_at / 100.0
        best: dict[int, tuple[float, set[int], str]] = {}

        def offer(i: int, score: float, hits, how: str) -> None:
            now = best.get(i)
            if now is None or score > now[0] + 1e-6:
                best[i] = (score, set(hits), how)
            elif abs(score - now[0]) <= 1e-6:
                now[1].update(hits)

        queries: dict[int, list[tuple[int, str]]] = {}  # by length
        for i, key, core in pending:
            for k in {key, core}:
                queries.setdefault(len(k), []).append((i, k))
        for length, group in queries.items():
            # OSA similarity >= cutoff needs min(len) >= cutoff * max(len)
            lo = math.ceil(cutoff * length - 1e-9)
            hi = math.floor(min(length / cutoff, 1e9) + 1e-9) if cutoff > 0 else 10**9
            a, b = np.searchsorted(self._sorted_len, [lo, hi + 1])
            keys, positions = self._sorted_keys[a:b], self._sorted_pos[a:b]
            if not keys:
                continue
            chunk = max(1, 4_000_000 // len(keys))  # at most 16 MB of float32 scores
            for start in range(0, len(group), chunk):
                part = group[start:start + chunk]
                scores = process.cdist([k for _, k in part], keys,
                                       scorer=OSA.normalized_similarity, score_cutoff=cutoff,
                                       dtype=np.float32, workers=-1)
                top = scores.max(axis=1)
                for row in np.flatnonzero((top >= cutoff) & (top > 0)):
                    ties = np.flatnonzero(scores[row] >= top[row] - 1e-6)
                    offer(part[row][0], float(top[row]) * 100.0, positions[ties].tolist(), "fuzzy")
        for i, key, core in pending:  # a catalogue part followed by an unknown tail
            for k in {key, core}:
                for cut in range(len(k) - 1, max(3, len(k) - 8), -1):
                    hits = self.by_key.get(k[:cut])
                    if hits:
                        score = 100.0 * (1.0 - (len(k) - cut) / (len(k) + cut))
                        if score >= confirm_at:
                            offer(i, score, hits, "tail")
                        break
        out = {}
        for i, (score, hits, how) in best.items():
            ordered = sorted(hits, key=lambda p: self.parts[p])
            status = "taken" if score >= take_at and len(ordered) == 1 else "confirm"
            out[i] = Match(ordered[0], round(score, 1), how, status, tuple(ordered[1:6]))
        return out


# -- writing a revised BOM -----------------------------------------------------------
