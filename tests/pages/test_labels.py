"""Labels: the QR code carries the record page's absolute URL; the text names the hazards."""

from __future__ import annotations

from urllib.parse import urlsplit

import segno
from django.urls import resolve, reverse

from bench import labels


def test_label_qr_payload_is_the_record_url_and_an_svg_is_drawn(lab, login, monkeypatch):
    payloads = []
    original = segno.make

    def recording_make(content, **kwargs):
        payloads.append(content)
        return original(content, **kwargs)

    monkeypatch.setattr(labels.segno, "make", recording_make)
    client = login(lab, "viewer")
    page = client.get(reverse("record_label", args=[lab.bath.code])).content.decode()
    assert payloads == [f"http://testserver{reverse('record', args=[lab.bath.code])}"]
    match = resolve(urlsplit(payloads[0]).path)  # scanning opens the record page
    assert match.url_name == "record" and match.kwargs == {"code": lab.bath.code}
    assert "<svg" in page and 'class="segno"' in page
    assert '<svg viewBox="0 0' in page  # scales to the label's printed size, never clipped
    assert "GHS06" in page and "H300" in page  # cyanide bath: skull pictogram, statements
    assert lab.bath.expires_on.isoformat() in page


def test_sheet_prints_several_labels_and_names_unknown_ids(lab, login):
    client = login(lab, "viewer")
    codes = [lab.good.code, lab.batch.code, lab.run.code]
    page = client.get(reverse("label_sheet"), {"codes": ",".join([*codes, "SUB-99999"])})
    text = page.content.decode()
    for code in codes:
        assert f'id="label-{code}"' in text
    assert text.count('class="segno"') == 3 and "SUB-99999" in text


def test_pictograms_follow_the_hazard_statements():
    # GHS Annex 1 pictogram assignments, from memory: H300 skull (GHS06), H314 corrosion
    # (GHS05), H225 flame (GHS02), H410 environment (GHS09); H412 carries no pictogram.
    assert [code for code, _ in labels.pictograms_for("H300 H314 H225 H410")] == \
        ["GHS02", "GHS05", "GHS06", "GHS09"]
    assert labels.pictograms_for("H412") == []


def test_qr_symbol_is_a_full_qr_code_at_error_level_m_or_better(monkeypatch):
    symbols = []
    original = segno.make
    monkeypatch.setattr(labels.segno, "make",
                        lambda *a, **k: symbols.append(original(*a, **k)) or symbols[-1])
    assert labels.qr_svg("https://lab.example/r/SUB-00001/").startswith("<svg")
    # ISO/IEC 18004 levels L < M < Q < H; segno may raise the level when it costs no size.
    assert not symbols[0].is_micro and symbols[0].error in {"M", "Q", "H"}


def test_a_sheet_refuses_more_labels_than_fit(lab, login):
    from bench.views.records import MAX_LABELS

    client = login(lab, "viewer")
    codes = ",".join([f"SUB-{n:05d}" for n in range(1, MAX_LABELS + 2)])
    response = client.get(reverse("label_sheet"), {"codes": codes})
    assert response.status_code == 400 and 'id="labels-error"' in response.content.decode()
