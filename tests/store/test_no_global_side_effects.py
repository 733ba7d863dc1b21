"""Importing formdb changes nothing outside it: the audit trail's sealing hooks listen to
formdb's own session class, not to SQLAlchemy's ``Session``."""

from __future__ import annotations

import importlib
import pkgutil

from sqlalchemy import Integer, String, create_engine, event, select
from sqlalchemy.orm import DeclarativeBase, Mapped, Session, mapped_column

import formdb
from formdb.store.sealing import LibrarySession


class _OtherBase(DeclarativeBase):
    pass


class _OtherLog(_OtherBase):
    """Another program's table that happens to share formdb's table name."""

    __tablename__ = "change_log"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    message: Mapped[str] = mapped_column(String(100))


def _import_all_of_formdb() -> None:
    for module in pkgutil.walk_packages(formdb.__path__, "formdb."):
        if module.name.startswith(("formdb.bench", "formdb.__main__")):
            continue
        importlib.import_module(module.name)


def test_an_unrelated_app_with_its_own_change_log_is_unaffected() -> None:
    _import_all_of_formdb()
    engine = create_engine("sqlite://")
    _OtherBase.metadata.create_all(engine)
    with Session(engine) as session:  # plain SQLAlchemy: ORM add, then update and delete
        session.add(_OtherLog(message="first"))
        session.commit()
        row = session.scalars(select(_OtherLog)).one()
        row.message = "edited"
        session.commit()
        session.delete(row)
        session.commit()
        assert session.scalars(select(_OtherLog)).all() == []


def test_no_listener_is_registered_on_sqlalchemys_session_class() -> None:
    _import_all_of_formdb()
    from formdb.store import sealing

    assert not event.contains(Session, "before_flush", sealing._before_flush)
    assert not event.contains(Session, "do_orm_execute", sealing._on_execute)
    assert event.contains(LibrarySession, "before_flush", sealing._before_flush)
    assert event.contains(LibrarySession, "do_orm_execute", sealing._on_execute)
