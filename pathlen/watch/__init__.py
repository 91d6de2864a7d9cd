"""The folder service: drawings dropped into an inbox are measured or estimated, results written to an
outbox, every job recorded in a ledger so that none is lost or done twice.  It owns files, the ledger
and signals, and measures nothing itself: the work is :func:`pathlen.batch.run_batch`'s."""
