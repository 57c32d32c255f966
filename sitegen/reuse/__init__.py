"""Reuse of earlier builds, in one place.

:mod:`.files` holds file stamps; :mod:`.digest` the digest pieces (column and
row bytes, labelled feeding, code digests found from the import graph); :mod:`.keys`
makes every key and salt a build files or compares things under, but for the
partition key of the cached analyses (:mod:`.partition_key`, apart so that no
other key's code salts them); and
:mod:`.last_build` keeps the record of the last build (its stamp, its output
files, its page keys, export blocks and chart checks).
"""
