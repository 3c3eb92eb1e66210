"""The invented demo event, shipped inside the wheel as cardgen.sample_routes."""
