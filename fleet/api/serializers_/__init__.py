"""The fleet API's serializers, one module per resource family over a base layer
(``base``, ``fields``); ``fleet.api.serializers`` gathers what other code imports."""
