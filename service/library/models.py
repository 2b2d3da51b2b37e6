"""The scenario library's tables (SQLAlchemy 2 declarative); the migrations create them.

A record is a row of `scenario_records` (its current name, sharing and revision, for
listing) with one row per revision in `scenario_revisions` and its current tags in
`scenario_tags`. `library_owners` counts each owner's records: its guarded increment is how
the per-owner limit holds when several workers or replicas write at once.

Owners are hashes (service.library.records.owner_hash); no key is ever stored.
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import Boolean, DateTime, ForeignKey, Index, Integer, String, Text
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column

__all__ = ["Base", "Owner", "Record", "Revision", "Tag"]


class Base(DeclarativeBase):
    pass


class Owner(Base):
    __tablename__ = "library_owners"

    owner: Mapped[str] = mapped_column(String(64), primary_key=True)
    records: Mapped[int] = mapped_column(Integer, nullable=False)


class Record(Base):
    __tablename__ = "scenario_records"

    #: Internal order of creation: newest first in lists, and the paging cursor.
    seq: Mapped[int] = mapped_column(Integer, primary_key=True, autoincrement=True)
    id: Mapped[str] = mapped_column(String(43), nullable=False, unique=True)
    owner: Mapped[str] = mapped_column(String(64), nullable=False, index=True)
    shared: Mapped[bool] = mapped_column(Boolean, nullable=False)
    revision: Mapped[int] = mapped_column(Integer, nullable=False)
    name: Mapped[str] = mapped_column(String(200), nullable=False)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), nullable=False)


class Revision(Base):
    __tablename__ = "scenario_revisions"

    record_seq: Mapped[int] = mapped_column(
        ForeignKey("scenario_records.seq", ondelete="CASCADE"), primary_key=True
    )
    revision: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200), nullable=False)
    notes: Mapped[str] = mapped_column(Text, nullable=False)
    #: The tags as a JSON array (their order kept); scenario_tags indexes the current ones.
    tags: Mapped[str] = mapped_column(Text, nullable=False)
    #: The display units as a JSON object (keys sorted); '{}' for none, and for every revision
    #: saved before units were kept (migration 0002).
    units: Mapped[str] = mapped_column(Text, nullable=False, server_default="{}")
    shared: Mapped[bool] = mapped_column(Boolean, nullable=False)
    kind: Mapped[str] = mapped_column(String(8), nullable=False)
    #: The normalised request as JSON text (keys sorted).
    request: Mapped[str] = mapped_column(Text, nullable=False)
    scenario_id: Mapped[str] = mapped_column(String(64), nullable=False)
    model_version: Mapped[str] = mapped_column(String(32), nullable=False)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), nullable=False)


class Tag(Base):
    __tablename__ = "scenario_tags"
    __table_args__ = (Index("ix_scenario_tags_tag", "tag"),)

    record_seq: Mapped[int] = mapped_column(
        ForeignKey("scenario_records.seq", ondelete="CASCADE"), primary_key=True
    )
    tag: Mapped[str] = mapped_column(String(40), primary_key=True)
