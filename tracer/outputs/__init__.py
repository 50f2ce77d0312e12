"""What people read from a result: the table, figures, the report (HTML or PDF), exports and the
photo's review picture."""
