"""Alembic environment: the engine is handed in by clipscribe.store.db.migrate."""

from alembic import context

from clipscribe.store.models import Base

config = context.config
engine = config.attributes.get("engine")


def run() -> None:
    if engine is None:
        raise RuntimeError("clipscribe migrations run through clipscribe.store.db.migrate")
    with engine.connect() as conn:
        sqlite = conn.dialect.name == "sqlite"
        if sqlite:
            # A table rebuild drops the old table, which with foreign keys on deletes its rows
            # first and fires ON DELETE actions (SET NULL, CASCADE) in the tables pointing at
            # it. The pragma only takes effect outside a transaction, so it is set on the
            # driver connection before anything begins; violations are checked before commit.
            conn.connection.dbapi_connection.execute("PRAGMA foreign_keys = OFF")
        try:
            context.configure(
                connection=conn,
                target_metadata=Base.metadata,
                render_as_batch=sqlite,
                compare_type=True,
            )
            with context.begin_transaction():
                context.run_migrations()
                if sqlite:
                    broken = conn.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
                    if broken:
                        raise RuntimeError(f"migration broke foreign keys: {broken[:5]}")
            conn.commit()
        finally:
            if sqlite:
                conn.connection.dbapi_connection.execute("PRAGMA foreign_keys = ON")


run()
