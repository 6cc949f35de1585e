"""Reports: rich terminal renderables, the JSON document, CSV tables, atomic files."""

CAUTION = ("Planning estimates only, not a safety system. High-power EUV beams are ionizing "
           "radiation; electron accelerators, high voltage, vacuum and cryogenics are hazards. "
           "Defer to local codes, your radiation-safety officer and licensed practice.")
