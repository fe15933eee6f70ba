"""Formula-looking text never becomes a live spreadsheet formula.

A product named ``=HYPERLINK("http://e","x")`` used to be stored as a
formula in the XLSX files (and as a broken one in composed cells such as
``...") x48 trays``). The workbook is read back with openpyxl and its XML
is checked for formula elements; the CSV gets the leading single quote the
usual CSV-injection guidance asks for (OWASP, "CSV Injection").
"""

from __future__ import annotations

import zipfile

import openpyxl
import pandas as pd
import pytest

from optimizer.reporting import export

NAME = '=HYPERLINK("http://e","x")'
DANGEROUS = [NAME, f"{NAME} x48 trays", "+1+1", "-2+3", "@SUM(A1)", "\tcmd", "\rcmd"]
HARMLESS = ["chicken-fillet", "x48 trays", "a=b", "", "-", "+"]


def table() -> pd.DataFrame:
    texts = DANGEROUS + HARMLESS
    return pd.DataFrame(
        {
            "product": texts,
            "kg": [-5.0 + i for i in range(len(texts))],  # negative numbers stay numbers
            NAME: range(len(texts)),  # a header made from a name
        }
    )


def test_xlsx_stores_formula_like_text_as_text(tmp_path):
    path = export.write_xlsx(tmp_path / "plan.xlsx", {"ovens": table()})
    with zipfile.ZipFile(path) as z:
        sheets = [n for n in z.namelist() if n.startswith("xl/worksheets/sheet")]
        xml = "".join(z.read(n).decode("utf-8") for n in sheets)
    assert "<f>" not in xml and "<f " not in xml  # no formula element anywhere
    ws = openpyxl.load_workbook(path)["ovens"]
    cells = {c.value: c for row in ws.iter_rows() for c in row}
    for text in DANGEROUS:
        cell = cells[text.replace("\r", "\n")]  # XML reads a bare CR back as LF
        assert cell.data_type == "s" and cell.quotePrefix, repr(text)
    assert cells[NAME].data_type == "s"  # the header cell
    assert cells["chicken-fillet"].data_type == "s" and not cells["chicken-fillet"].quotePrefix
    assert ws["B2"].value == -5.0 and ws["B2"].data_type == "n"


def test_csv_prefixes_formula_like_text_with_a_quote(tmp_path):
    path = export.write_csv(tmp_path / "ovens.csv", table())
    back = pd.read_csv(path, keep_default_na=False)
    assert list(back.columns) == ["product", "kg", "'" + NAME]
    assert back["product"].tolist()[: len(DANGEROUS)] == ["'" + t for t in DANGEROUS]
    assert back["product"].tolist()[len(DANGEROUS) :] == HARMLESS
    assert back["kg"].tolist() == pytest.approx(table()["kg"].tolist())


@pytest.mark.parametrize("text", DANGEROUS)
def test_formula_like(text):
    assert export.formula_like(text)
    assert not export.formula_like(-1.0)
    assert not any(export.formula_like(t) for t in HARMLESS)
