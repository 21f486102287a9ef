"""Disjoint sets with path compression and union by rank (Tarjan 1975).

Elements are the integers ``0 .. n-1``.  The representative reported to callers
is deterministic: the smallest element of the class, whatever the order of the
unions, so that merged nodes come out the same for any input order.  Each class
remembers its members.
"""

from __future__ import annotations

__all__ = ["UnionFind"]


class UnionFind:
    """Disjoint-set forest over ``0 .. n-1`` (Tarjan 1975).

    Parameters
    ----------
    n : int
        Number of elements.

    Examples
    --------
    >>> uf = UnionFind(4)
    >>> uf.union(3, 1)
    True
    >>> uf.canonical(3), uf.members(1)
    (1, [1, 3])

    References
    ----------
    Tarjan, R. E. (1975). Efficiency of a good but not linear set union
    algorithm. Journal of the ACM 22(2), 215-225.
    """

    __slots__ = ("_parent", "_rank", "_members", "_smallest", "_classes")

    def __init__(self, n: int):
        if n < 0:
            raise ValueError("n must be non-negative")
        self._parent = list(range(n))
        self._rank = [0] * n
        # Members and smallest element are kept on roots only.
        self._members: dict[int, list[int]] = {}
        self._smallest = list(range(n))
        self._classes = n

    def __len__(self) -> int:
        return len(self._parent)

    @property
    def class_count(self) -> int:
        """Number of disjoint classes."""
        return self._classes

    def find(self, x: int) -> int:
        """Return the internal root of ``x``, compressing the path to it."""
        parent = self._parent
        root = x
        while parent[root] != root:
            root = parent[root]
        while parent[x] != root:
            parent[x], x = root, parent[x]
        return root

    def union(self, a: int, b: int) -> bool:
        """Merge the classes of ``a`` and ``b``; return False if already one class."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        rank = self._rank
        if rank[ra] < rank[rb]:
            ra, rb = rb, ra
        self._parent[rb] = ra
        if rank[ra] == rank[rb]:
            rank[ra] += 1
        members = self._members
        ma = members.pop(ra, None) or [ra]
        mb = members.pop(rb, None) or [rb]
        # Append the smaller list to the larger: O(n log n) in total.
        if len(ma) < len(mb):
            ma, mb = mb, ma
        ma.extend(mb)
        members[ra] = ma
        smallest = self._smallest
        if smallest[rb] < smallest[ra]:
            smallest[ra] = smallest[rb]
        self._classes -= 1
        return True

    def connected(self, a: int, b: int) -> bool:
        """True when ``a`` and ``b`` are in the same class."""
        return self.find(a) == self.find(b)

    def canonical(self, x: int) -> int:
        """Deterministic representative of the class of ``x``: its smallest element."""
        return self._smallest[self.find(x)]

    def members(self, x: int) -> list[int]:
        """Sorted members of the class of ``x``."""
        root = self.find(x)
        return sorted(self._members.get(root, [root]))

    def classes(self) -> list[list[int]]:
        """All classes as sorted lists, ordered by their smallest element."""
        out = []
        for x in range(len(self._parent)):
            root = self.find(x)
            if self._smallest[root] == x:
                out.append(sorted(self._members.get(root, [root])))
        return out

    def labels(self) -> list[int]:
        """Class number of every element; classes are numbered by smallest element."""
        n = len(self._parent)
        number = [-1] * n
        out = [0] * n
        count = 0
        smallest = self._smallest
        for x in range(n):
            s = smallest[self.find(x)]
            if number[s] < 0:
                number[s] = count
                count += 1
            out[x] = number[s]
        return out
