"""Signal, measurement and marks logic. Never imports Qt."""
