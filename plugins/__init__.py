"""Built-in lumpgraph plugins, registered through the entry-point group
``lumpgraph.plugins`` exactly as a third-party plugin would be:
``engine`` (powertrain on mounts), ``seat`` (seat and occupant) and
``split_body`` (a body split into beam-joined segments)."""
