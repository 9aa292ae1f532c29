"""The reader's interpretation in the reading workflow (no Qt): statements from the catalogue,
in the reader's own words and from the automatic statements; edit, remove, move; undo; the
marks file read back as plain JSON; hidden automatic statements in a blinded read that hides
the automatic marks; an adjudicator taking a reader's statement."""

from __future__ import annotations

from reviewapp.core.workflow import ADJUDICATOR, SECOND_BLINDED, SECOND_HIDDEN
from reviewapp.core.workflow.editors import AUTOMATIC_HIDDEN
from tests.workflow.conftest import sidecar_json


def _stmts(w, reader: str = "reader1") -> list[dict]:
    return sidecar_json(w.analysis)["readings"][reader]["statements"]


def test_catalogue_own_words_edit_move_remove_and_undo(open_workflow):
    w = open_workflow()
    out = w.statements.add("conduction.lafb")
    assert out.done and out.message.startswith("Add statement left anterior fascicular block")
    assert w.statements.add("conduction.lafb").message.startswith("No statement added")
    assert w.statements.add("no.such_code").message.startswith("No statement added")
    assert w.statements.add_free_text("   ").message == "No statement added: the text is empty."
    assert w.statements.add_free_text("Compare with the tracing of 2025").done
    first, second = (x.id for x in w.marks.statements)
    assert [(x["code"], x["origin"]) for x in _stmts(w)] == [
        ("conduction.lafb", "catalogue"),
        ("other.free_text", "free_text"),
    ]
    assert w.statements.edit(second, "No earlier tracing").done
    assert w.marks.statement(second).text == "No earlier tracing"
    assert w.statements.move(first, -1).message.endswith("is first already.")
    assert w.statements.move(first, +1).done
    assert [x.id for x in w.marks.statements] == [second, first]
    assert w.statements.delete(first).done and [x.id for x in w.marks.statements] == [second]
    # One undo step per action, through the marks file.
    assert w.undo().done and [x.id for x in w.marks.statements] == [second, first]
    assert w.undo().done and [x.id for x in w.marks.statements] == [first, second]
    assert w.redo().done and [x.id for x in w.marks.statements] == [second, first]
    actions = [e["action"] for e in sidecar_json(w.analysis)["audit"]]
    assert actions[-3:] == ["undo:delete_statement", "undo:move_statement", "redo:move_statement"]


def test_start_from_automatic_adds_what_is_missing_once(open_workflow):
    w = open_workflow()
    auto = w.automatic_interpretation()
    assert auto is not None and auto.statements
    out = w.statements.start_from_automatic()
    assert out.done and len(w.history) == 1  # several statements, one undo step
    side = _stmts(w)
    assert [x["code"] for x in side] == [s.code for s in auto.statements]
    assert [x["text"] for x in side] == [s.line for s in auto.statements]
    assert {x["origin"] for x in side} == {"automatic"}
    again = w.statements.start_from_automatic()
    assert not again.recorded and "in the list already" in again.message
    # The statements follow the reading: a moved mark recomputes them (values change).
    assert w.automatic_interpretation() is auto  # same reading: kept, not recomputed


def test_blinded_read_that_hides_automatic_marks_hides_automatic_statements(open_workflow):
    w = open_workflow("reader2", SECOND_HIDDEN)
    assert w.hide_automatic and w.automatic_interpretation() is None
    out = w.statements.start_from_automatic()
    assert not out.recorded and out.message == AUTOMATIC_HIDDEN
    # The catalogue and own words stay available.
    assert w.statements.add("rhythm.sinus").done
    assert [x["code"] for x in _stmts(w, "reader2")] == ["rhythm.sinus"]


def test_blinded_read_with_automatic_marks_shown_sees_automatic_statements(open_workflow):
    w = open_workflow("reader2", SECOND_BLINDED)
    assert w.automatic_interpretation() is not None
    assert w.statements.start_from_automatic().done


def test_adjudicator_takes_a_readers_statement(open_workflow):
    w1 = open_workflow("reader1")
    w1.statements.add("conduction.lafb")
    sid = w1.marks.statements[0].id
    w1.close()
    adj = open_workflow("adj1", ADJUDICATOR)
    out = adj.statements.adopt("reader1", sid)
    assert out.done
    (x,) = _stmts(adj, "adj1")
    assert (x["code"], x["origin"], x["from_reader"]) == ("conduction.lafb", "reader", "reader1")
    assert not adj.statements.adopt("reader1", sid).recorded  # already in the final list
    # A first reader cannot take another reader's statement as final.
    w3 = open_workflow("reader3")
    assert not w3.statements.adopt("reader1", sid).done
