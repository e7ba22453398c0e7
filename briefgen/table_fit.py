"""Will a table fit across the text block? An estimate in characters, made before rendering.

Numbers never wrap (a broken number misreads), so a table whose number columns alone
are wider than the text block can only run past the margin or be laid out another way
(a two-way matrix turned round, or its long form). Headers wrap between words, so they
count by their longest word; level names wrap anywhere, so they count up to the width
a wrapped name column is given.
"""

from __future__ import annotations

from briefgen.tables import Table

# 170 mm of A4 text width at 8.5 pt DejaVu Sans: digits are 0.636 em (5.4 pt) wide (the font's
# advance widths, from memory), so about 89 digits fit; the budget keeps a margin for bold headers.
# A rule of thumb, no published source, held to by the PDF measurement in tests/test_layout.py.
TEXT_WIDTH_CHARACTERS = 84
CELL_PADDING_CHARACTERS = 2  # 2 mm each side of a cell ≈ 2 characters in all
NAME_COLUMN_CHARACTERS = 16  # a name column narrower than this wraps every few letters


def column_characters(table: Table, index: int) -> int:
    """Characters the column needs on its widest line, padding included."""
    cells = [row[index] for row in table.rows]
    header = table.header[index]
    # Headers wrap between words only, and to at most three lines before their column widens.
    header_needs = max([len(word) for word in header.split()] + [-(-len(header) // 3)])
    if table.numeric[index] and index > 0:
        needed = max([len(cell) for cell in cells] + [header_needs])
    else:  # level names wrap anywhere, down to the narrowest name column worth reading
        longest = max((len(cell) for cell in cells), default=0)
        needed = max(
            min(longest, NAME_COLUMN_CHARACTERS), min(header_needs, NAME_COLUMN_CHARACTERS)
        )
    return needed + CELL_PADDING_CHARACTERS


def fits_across(table: Table, characters: int = TEXT_WIDTH_CHARACTERS) -> bool:
    """Whether the table's columns, at their estimated widths, fit the text block."""
    return sum(column_characters(table, i) for i in range(len(table.header))) <= characters
