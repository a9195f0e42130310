"""Files embedded into the review page: three.js (MIT, see three.LICENSE)."""
