"""tradeopt mission layer."""
