"""PFX_CHECKSUM: the SHA-256 of the input cells, the same whichever bridge hands them over.

The expected digests are computed here with hashlib (NIST FIPS 180-4, SHA-256) over the
canonical text spelled out by hand from the module's rules, not by calling the function's own
serialiser; the bridge forms are those of the design note (LibreOffice hands '' for a blank and
1.0 for TRUE, xlwings None and True; a one-row or one-column range may come flat).
"""

import hashlib

from portflux import cells as C

PORTS = (("port", "area"), (None, "m^2"), ("jet", 0.01))


def sha(text):
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def test_the_digest_is_sha256_of_the_canonical_text_spelled_out_by_hand():
    text = ("portflux-inputs-1"
            "|a1:6|t4:port|t4:area|b|t3:m^2|t3:jet|n0.01"
            "|a2:4|n5.0|n0.0|n0.0|t3:m/s"
            "|a3:1|t2:SI|a4:1|b|a5:1|b")
    assert C.PFX_CHECKSUM(PORTS, ((5.0, 0.0, 0.0, "m/s"),), "SI") == sha(text)


def test_libreoffice_and_excel_forms_of_the_same_cells_give_one_digest():
    excel = C.PFX_CHECKSUM(PORTS, [5.0, 0.0, -0.0, "m/s"], "SI",
                           (("fluid_mass", 0.0, "kg"), ("flag", True, None)))
    calc = C.PFX_CHECKSUM(tuple(tuple("" if c is None else c for c in r) for r in PORTS),
                          ((5.0, 0.0, 0.0, "m/s"),), (("SI",),),
                          (("fluid_mass", 0.0, "kg"), ("flag", 1.0, "")))
    assert excel == calc and len(excel) == 64


def test_any_changed_number_text_unit_or_blank_changes_the_digest():
    base = C.PFX_CHECKSUM(PORTS, 5.0, "SI")
    changed = [
        (PORTS[:2] + (("jet", 0.010000001),), 5.0, "SI"),     # a number
        (PORTS[:2] + (("jets", 0.01),), 5.0, "SI"),           # a text
        ((PORTS[0], (None, "mm^2"), PORTS[2]), 5.0, "SI"),     # a unit
        ((PORTS[0], ("", "m^2"), ("jet", 0.01)), 5.0, "US"),  # the output units
        (PORTS[:2] + (("jet", None),), 5.0, "SI"),            # a value cleared
    ]
    digests = {C.PFX_CHECKSUM(*a) for a in changed}
    assert base not in digests and len(digests) == len(changed)
    # cells moved between arguments are another input: the argument counts are hashed
    assert C.PFX_CHECKSUM(((1.0, 2.0),), 3.0) != C.PFX_CHECKSUM(((1.0,),), ((2.0, 3.0),))


def test_a_currency_cell_and_spare_blank_rows_and_columns_give_the_digest_of_the_filled_block():
    """Excel hands a currency-formatted cell as Decimal (COM's Currency, four decimals) and a
    range selected with spare rows/columns with blank padding; both are the same inputs."""
    from decimal import Decimal

    tight = C.PFX_CHECKSUM(PORTS, ((5.0, 0.0, 0.0, "m/s"),), "SI")
    padded = tuple(r + (None,) for r in PORTS) + ((None, None, ""),)
    currency = PORTS[:2] + (("jet", Decimal("0.0100")),)
    assert C.PFX_CHECKSUM(padded, ((5.0, 0.0, 0.0, "m/s", None),), "SI") == tight
    assert C.PFX_CHECKSUM(currency, ((Decimal("5.0000"), 0.0, 0.0, "m/s"),), "SI") == tight
    # a blank cell inside the block still counts (it is not padding)
    assert C.PFX_CHECKSUM(PORTS[:2] + (("jet", None),), 5.0, "SI") != C.PFX_CHECKSUM(
        PORTS[:2] + (("jet",),), 5.0, "SI")
