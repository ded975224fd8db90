"""Foundations every stage uses: the error hierarchy (:mod:`.errors`, every user error an
``InputError`` naming file, key and expectation), strict TOML reading and validation against
field specs (:mod:`.config`) with plausible ranges per key (:mod:`.plausible`), atomic file
output (:mod:`.atomic`: a file is either complete or absent, exclusive temporary files, all
or none of a command's files), output paths checked before any work and names from files
made safe (:mod:`.paths`), and block-wise streaming statistics of series (:mod:`.streams`: power sums, sign
reversals, zero-phase high-frequency share). Takes nothing from the other stages; gives them
these services.
"""
