"""Tiny Gerber/Excellon writers for tests: our own boards, written out by hand from the spec.

Coordinates in mm, format 4.6 (Gerber Layer Format Specification 2023.08, section 4.2.1).
"""

from __future__ import annotations


def _c(v: float) -> str:
    return str(round(v * 1_000_000))


def gerber(objects: list[str], *, function: str | None = None, net_comment_form: bool = False) -> bytes:
    head = []
    if function:
        head.append(f"%TF.FileFunction,{function}*%")
    head += ["%FSLAX46Y46*%", "%MOMM*%", "%LPD*%", "%ADD10C,1.000000*%", "%ADD11C,0.200000*%", "%ADD12R,2.000000X2.000000*%"]
    return ("\n".join(head + objects + ["M02*"]) + "\n").encode()


def flash(x: float, y: float, d: int = 12, net: str | None = None) -> str:
    pre = f"%TO.N,{net}*%\n" if net else ""
    post = "\n%TD*%" if net else ""
    return f"{pre}D{d}*\nX{_c(x)}Y{_c(y)}D03*{post}"


def draw(x0: float, y0: float, x1: float, y1: float, d: int = 10, net: str | None = None) -> str:
    pre = f"%TO.N,{net}*%\n" if net else ""
    post = "\n%TD*%" if net else ""
    return f"{pre}D{d}*\nX{_c(x0)}Y{_c(y0)}D02*\nX{_c(x1)}Y{_c(y1)}D01*{post}"


def square_outline(x0: float, y0: float, x1: float, y1: float) -> bytes:
    return gerber(["D11*", f"X{_c(x0)}Y{_c(y0)}D02*", f"X{_c(x1)}Y{_c(y0)}D01*", f"X{_c(x1)}Y{_c(y1)}D01*",
                   f"X{_c(x0)}Y{_c(y1)}D01*", f"X{_c(x0)}Y{_c(y0)}D01*"], function="Profile,NP")


def excellon(holes_mm: list[tuple[float, float]], dia_mm: float = 0.4, *, inch: bool = False, plated: bool = True) -> bytes:
    k = 1 / 25.4 if inch else 1.0
    lines = ["M48", f"; #@! TF.FileFunction,{'Plated' if plated else 'NonPlated'},1,2,{'PTH' if plated else 'NPTH'}",
             "INCH" if inch else "METRIC", f"T1C{dia_mm * k:.4f}", "%", "G90", "G05", "T1"]
    lines += [f"X{x * k:.4f}Y{y * k:.4f}" for x, y in holes_mm]
    lines.append("M30")
    return ("\n".join(lines) + "\n").encode()
