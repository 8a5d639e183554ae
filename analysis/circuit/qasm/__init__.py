"""OpenQASM 3 in (:mod:`.parse`) and out (:mod:`.export`)."""
