"""The demo scenario: invented data of a fictional manufacturer, generated with a fixed seed."""
