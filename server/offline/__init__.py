"""Survey work without a signal: the service worker, the browser's change queue and its page."""
