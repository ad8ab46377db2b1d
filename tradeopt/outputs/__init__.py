"""tradeopt outputs layer."""
