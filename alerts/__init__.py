"""Alerts: the office is told of an urgent fault, an opened flag or a leak deadline near, by
e-mail (at once or in a daily digest, as each person chooses) and by a signed webhook."""
