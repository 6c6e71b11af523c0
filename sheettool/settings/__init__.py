"""Settings: named values that shape an evaluation, each with its origin; typed text; conversion and merging.

This floor sits on the core only: nothing here knows how an evaluation runs or how a workbook is read.
"""

from sheettool.settings.names import KNOWN_SETTINGS, Setting, earlier_label_note, label_key, setting_name

__all__ = ["KNOWN_SETTINGS", "Setting", "earlier_label_note", "label_key", "setting_name"]
