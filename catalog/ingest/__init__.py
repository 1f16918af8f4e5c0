"""Reading supplier files into the catalogue: readers, mapping profiles, normalising, import."""
from .importer import ImportReport, import_files, read_and_check, validate_files, write_rejects
from .mapping import MappingProfile, load_mapping
from .normalise import slug

__all__ = ["ImportReport", "import_files", "read_and_check", "validate_files", "write_rejects",
           "MappingProfile", "load_mapping", "slug"]
