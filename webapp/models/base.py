"""The one declarative base of the notebook, its naming convention, and what every table shares."""

from __future__ import annotations

import datetime as dt

import sqlalchemy as sa
import sqlalchemy.orm as so

#: the largest id an INTEGER column holds on both databases (a larger number names nothing)
MAX_ID = 2**31 - 1


#: Alembic's recommended naming convention ("The Importance of Naming Constraints").
NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


def utcnow() -> dt.datetime:
    """Return the current time in UTC (naive, as stored)."""
    return dt.datetime.now(dt.UTC).replace(tzinfo=None)


class Base(so.DeclarativeBase):
    """The one declarative base of the notebook."""

    metadata = sa.MetaData(naming_convention=NAMING_CONVENTION)
