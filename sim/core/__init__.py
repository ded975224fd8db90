"""Foundations every stage uses: the error hierarchy (:mod:`.errors`, every user error an
``InputError`` naming file, key and expectation), strict TOML reading and validation against
field specs (:mod:`.config`), and atomic file output (:mod:`.atomic`: a file is either complete
or absent). Takes nothing from the other stages; gives them these three services.
"""
