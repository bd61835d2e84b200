"""Background and scheduled work: the monthly reports, the nightly flag refresh, the daily
alert digest, and reports asked for from the page, run by a worker off the request path."""
