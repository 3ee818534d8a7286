"""The use cases the JSON API, the browser desk and the command line share, free of any web framework.

    request (JSON, form, file) ─> job (checked against limits) ─> compute pool ─> one serialiser ─> store
                                                                                     └─> charts drawn ahead
Reading, listing and deleting stored records go through ``records``, the same for every kind of record.
"""
