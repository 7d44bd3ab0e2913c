"""Obvert: compile certified cook programs for automated contact-cooking appliances.

The output of this package is an engineering aid. Every cook program it emits must be
validated by measurement on the real appliance, and defers to local food codes, HACCP
plans and licensed food-safety professionals.
"""

__version__ = "0.1.0"

CAUTION = (
    "Engineering aid only. This cook program must be validated by temperature measurement "
    "on the real appliance with the real product before use, and it defers to local food "
    "codes, the site's HACCP plan and licensed food-safety professionals."
)
