"""The lead's People box on a team server: a person added with a password can log in, and a
new password replaces the old one."""

import psycopg
import pytest

from clipscribe.ui.dialogs.people import PeopleBox

from .conftest import connect_as


@pytest.mark.postgres
def test_people_box_makes_logins_on_a_server(qtbot, server_project, uid):
    from clipscribe.ui.app import application
    application()
    p = server_project
    box = PeopleBox(p)
    qtbot.addWidget(box)
    assert not box.password.isHidden() and not box.password_button.isHidden()
    name = f"ann_{uid}"
    box.name.setText(name)
    box.password.setText("pw-first")
    assert box.add_person() and "with a login" in box.note.text()
    assert box.password.text() == ""                       # never left in the field
    with connect_as(p, name, "pw-first") as conn:
        assert conn.execute("SELECT current_user").fetchone() == (name,)
    assert box.selected() == (name, "annotator")
    assert not box.set_password() and "type the password" in box.note.text()
    box.password.setText("pw-second")
    assert box.set_password() and "new password" in box.note.text()
    with connect_as(p, name, "pw-second"):
        pass
    with pytest.raises(psycopg.OperationalError):
        connect_as(p, name, "pw-first")
