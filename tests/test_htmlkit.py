"""Tests of the shared HTML pieces of written pages."""

from polisect.present.htmlkit import STANDALONE_CSP, csp_meta, grid, kv_table, page

EVIL = '<script>alert(1)</script>"\'&'


def test_written_pages_carry_a_policy_that_runs_no_script():
    """Issue 17 probe: pages written to disk carried no content security policy."""
    text = page(EVIL, "meta", "<p>body</p>")
    assert csp_meta() in text and text.index(csp_meta()) < text.index("<title>")
    assert "script-src" not in STANDALONE_CSP and "default-src 'none'" in STANDALONE_CSP


def test_user_strings_are_escaped():
    """Issue 17 probe: a phase name went unescaped into a written page."""
    for text in (page(EVIL, "", ""), grid([EVIL], [[EVIL]]), kv_table([(EVIL, EVIL)])):
        assert "<script>" not in text and "&lt;script&gt;" in text
