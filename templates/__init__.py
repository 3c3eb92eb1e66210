"""The default templates, shipped inside the wheel as cardgen.templates."""
