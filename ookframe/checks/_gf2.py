"""Polynomials over GF(2) as Python ints (bit i = coefficient of x^i), and the order of x.

Used by the CRC strength analysis: the order of x modulo the generator g(x) is the period
of the code, i.e. the shortest codeword length at which a weight-2 error goes undetected
is ``order + 1``.
"""

from __future__ import annotations

import math


def deg(a: int) -> int:
    """Return the degree of ``a`` (-1 for the zero polynomial)."""
    return a.bit_length() - 1


def mod(a: int, m: int) -> int:
    """Return ``a mod m``."""
    dm = deg(m)
    while (da := deg(a)) >= dm:
        a ^= m << (da - dm)
    return a


def mulmod(a: int, b: int, m: int) -> int:
    """Return ``a * b mod m``."""
    a = mod(a, m)
    dm = deg(m)
    top = 1 << dm
    out = 0
    while b:
        if b & 1:
            out ^= a
        b >>= 1
        a <<= 1
        if a & top:
            a ^= m
    return out


def powmod(a: int, e: int, m: int) -> int:
    """Return ``a ** e mod m`` (square and multiply)."""
    out = mod(1, m)
    a = mod(a, m)
    while e:
        if e & 1:
            out = mulmod(out, a, m)
        a = mulmod(a, a, m)
        e >>= 1
    return out


def gcd(a: int, b: int) -> int:
    """Return the greatest common divisor of two polynomials."""
    while b:
        a, b = b, mod(a, b)
    return a


def divide(a: int, b: int) -> int:
    """Return the quotient ``a // b`` (exact division expected)."""
    q = 0
    db = deg(b)
    while (da := deg(a)) >= db:
        q |= 1 << (da - db)
        a ^= b << (da - db)
    return q


def irreducible_degrees(g: int) -> set[int]:
    """Return the set of degrees of the distinct irreducible factors of ``g``.

    Distinct-degree factorisation: gcd(x^(2^d) - x, f) collects the irreducible factors
    of degree d once the smaller ones are removed.
    """
    f = g
    while f & 1 == 0 and deg(f) > 0:  # factor x
        f >>= 1
    degrees: set[int] = set()
    if f != g:
        degrees.add(1)
    d = 0
    h = 2  # x^(2^d) mod f
    while deg(f) >= 2 * (d + 1):
        d += 1
        h = mulmod(h, h, f)
        common = gcd(h ^ 2, f)
        if deg(common) > 0:
            degrees.add(d)
            while deg(c := gcd(f, common)) > 0:
                f = divide(f, c)
            h = mod(h, f) if deg(f) > 0 else 0
    if deg(f) > 0:
        degrees.add(deg(f))
    return degrees


def _is_probable_prime(n: int) -> bool:
    if n < 2:
        return False
    small = (2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41)
    for p in small:
        if n % p == 0:
            return n == p
    d, s = n - 1, 0
    while d % 2 == 0:
        d, s = d // 2, s + 1
    for a in small:  # deterministic for n < 3.3e24
        x = pow(a, d, n)
        if x in (1, n - 1):
            continue
        for _ in range(s - 1):
            x = x * x % n
            if x == n - 1:
                break
        else:
            return False
    return True


def _pollard_brent(n: int) -> int:
    if n % 2 == 0:
        return 2
    for c in range(1, 100):
        y, r, q, g = 2, 1, 1, 1
        x = ys = 2
        while g == 1:
            x = y
            for _ in range(r):
                y = (y * y + c) % n
            k = 0
            while k < r and g == 1:
                ys = y
                for _ in range(min(128, r - k)):
                    y = (y * y + c) % n
                    q = q * abs(x - y) % n
                g = math.gcd(q, n)
                k += 128
            r *= 2
        if g == n:
            g = 1
            while g == 1:
                ys = (ys * ys + c) % n
                g = math.gcd(abs(x - ys), n)
        if g != n:
            return g
    raise ArithmeticError(f"could not factor {n}")  # pragma: no cover


def prime_factors(n: int) -> set[int]:
    """Return the distinct prime factors of ``n`` (n < 2**80; Pollard-Brent + Miller-Rabin)."""
    out: set[int] = set()
    stack = [n]
    while stack:
        m = stack.pop()
        if m == 1:
            continue
        for p in (2, 3, 5, 7, 11, 13):
            if m % p == 0:
                out.add(p)
                while m % p == 0:
                    m //= p
        if m == 1:
            continue
        if _is_probable_prime(m):
            out.add(m)
            continue
        f = _pollard_brent(m)
        stack += [f, m // f]
    return out


def order_of_x(g: int) -> int:
    """Return the multiplicative order of x modulo ``g`` (g(0) must be 1, deg g >= 1).

    The order divides M = lcm(2^d - 1 over the irreducible factor degrees d) * 2^k with
    2^k >= the largest multiplicity (<= deg g); M is reduced prime by prime.
    """
    if g & 1 == 0 or deg(g) < 1:
        raise ValueError("order_of_x needs a polynomial of degree >= 1 with constant term 1")
    m = 1
    for d in irreducible_degrees(g):
        m = math.lcm(m, (1 << d) - 1)
    k = max(1, deg(g)).bit_length()
    m <<= k
    primes = prime_factors(m)
    for p in primes:
        while m % p == 0 and powmod(2, m // p, g) == 1:
            m //= p
    assert powmod(2, m, g) == 1
    return m
