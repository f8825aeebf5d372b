"""partsel's edge readers and writers: files from users in, files for users out (BOMs and
others), each refusing bad input with an :class:`~partsel.errors.InputError` that names the
file, the line or record and the field."""
