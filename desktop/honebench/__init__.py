"""honebench: find the instruction wording that makes your local model do one task well."""
__version__ = "0.1.0"
