"""What every artefact says about its origin: the generator version and the food-safety caution.

The lowest module of the package: every layer may import it, it imports nothing of Obvert.
"""

__version__ = "0.1.0"

#: Printed by the command line and written into every emitted file.
CAUTION = (
    "Engineering aid only. This cook program must be validated by temperature measurement "
    "on the real appliance with the real product before use, and it defers to local food "
    "codes, the site's HACCP plan and licensed food-safety professionals."
)
