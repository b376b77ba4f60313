"""Readers beside :mod:`verify.data`: each turns one kind of source into the cells that
:mod:`verify.data` makes tidy (xlsx values through python-calamine, formula cells, Parquet
files, SQL queries). They are imported where they are used: ``verify --help`` pays for none."""
