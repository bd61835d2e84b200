"""The fleet API's views, one module per resource family over a base layer (``base``);
``fleet.api.views`` gathers what the URL configuration and other code import."""
