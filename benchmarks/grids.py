"""The benchmark designs: an N × N plate written as plain statements or as one `plate`, and its
nonlinear twin with thermoelectric modules and a driver circuit."""
from __future__ import annotations

CELL_C = "0.5 J/K"  # heat capacity of a cell
CELL_G = "2 W/K"  # link between neighbouring cells
EDGE_G = "4 W/K"  # cell centre to the held edge: half a cell


def _tail(n: int, steps: int, record: str) -> list[str]:
    return [f"transient until {steps} s step 1 s", f"record {record}"]


def plain(n: int, steps: int = 1000) -> str:
    """N² masses, 2·N·(N−1) links, N links from the left column to a held sink, one heat input."""
    m = (n + 1) // 2
    out = [f'design "plate {n} x {n}, plain statements"', "fixed sink 25 degC"]
    out += [f"mass c{i}_{j} {CELL_C} start 25 degC" for i in range(1, n + 1) for j in range(1, n + 1)]
    for i in range(1, n + 1):
        for j in range(1, n + 1):
            if j < n:
                out.append(f"link h{i}_{j} c{i}_{j} c{i}_{j + 1} {CELL_G}")
            if i < n:
                out.append(f"link v{i}_{j} c{i}_{j} c{i + 1}_{j} {CELL_G}")
    out += [f"link s{i} c{i}_1 sink {EDGE_G}" for i in range(1, n + 1)]
    out.append(f"heat q c{m}_{m} 2 W")
    out += _tail(n, steps, f"T(c{m}_{m}) T(c1_{n})")
    return "\n".join(out) + "\n"


def plate(n: int, steps: int = 1000) -> str:
    """The same network as `plain`, written with the `plate` statement."""
    m = (n + 1) // 2
    out = [f'design "plate {n} x {n}, one plate statement"',
           f"plate sp {n} by {n} capacity {CELL_C} conductance {CELL_G} start 25 degC",
           "fixed sp.left 25 degC", f"heat q sp.r{m}c{m} 2 W"]
    out += _tail(n, steps, f"T(sp.r{m}c{m}) T(sp.r1c{n})")
    return "\n".join(out) + "\n"


def modules(n: int, steps: int = 1000, count: int = 4) -> str:
    """`plain` plus `count` thermoelectric modules pumping heat from small cold masses into the
    plate, in series on a supply behind a resistor and a filter capacitor; the supply steps on."""
    base = plain(n, steps).replace(f'"plate {n} x {n}, plain statements"',
                                   f'"plate {n} x {n} with {count} modules and a driver"')
    body, tail = base.rsplit("transient", 1)
    out = [body.rstrip("\n"), "ground gnd", "source supply s gnd step(0 V, 6 V, 10 s)",
           "resistor rs s p0 0.3 ohm heats sink", "capacitor cf p0 gnd 10 mF"]
    spots = [((k + 1) * n // (count + 1), (k + 1) * n // (count + 1)) for k in range(count)]
    for k, (i, j) in enumerate(spots):
        i, j = max(i, 1), max(j, 1)
        pin_out = f"p{k + 1}" if k + 1 < count else "gnd"
        out.append(f"mass cold{k} 2 J/K start 25 degC")
        out.append(f"heat load{k} cold{k} 0.3 W")
        out.append(f"thermoelectric te{k} pins p{k} {pin_out} sides cold{k} c{i}_{j} "
                   "{ seebeck 40 mV/K  resistance 1.2 ohm  conductance 0.4 W/K }")
    m = (n + 1) // 2
    out += [f"transient until {steps} s step 1 s", f"record T(c{m}_{m}) T(cold0) I(te0) V(p0)"]
    return "\n".join(out) + "\n"
