"""The office pages, one module per area: ``schedule``, ``visits`` (booking and changing),
``visit_page`` and ``review`` (a visit's page and the review queue), ``maintenance``,
``units``, ``flags``, ``sites``, ``attention`` and ``people``; what they share is in ``base``
(reach, rendering) and ``stored`` (stored results as the pages show them).

Each view parses the request, reads through query sets scoped to the user's reach
(``Model.objects.visible_to``, the rule of ``fleet.reach``, so anything outside it is a
404, never a 403 that confirms it exists), fetches all the template touches in a fixed
number of queries, and calls a service for any write. The thermodynamics happened earlier
(diagnostics); these pages only show stored results.
"""
