"""Alembic environment: the engine is handed in by clipscribe.store.db.migrate."""

from alembic import context

from clipscribe.store.models import Base

config = context.config
engine = config.attributes.get("engine")


def run() -> None:
    if engine is None:
        raise RuntimeError("clipscribe migrations run through clipscribe.store.db.migrate")
    with engine.connect() as conn:
        context.configure(
            connection=conn,
            target_metadata=Base.metadata,
            render_as_batch=conn.dialect.name == "sqlite",
            compare_type=True,
        )
        with context.begin_transaction():
            context.run_migrations()
        conn.commit()


run()
