"""Vectorised evaluation of a block of formulas (placeholder; see compile_vector)."""


def compile_vector(tree, calc, sheet, tpl):
    return None
