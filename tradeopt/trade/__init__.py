"""tradeopt trade layer."""
