"""Records and files: the JSON record and its schema, writing outputs as whole sets."""
