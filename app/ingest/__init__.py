"""Offshore data in: sources (registry), store (validate -> store), fetch (httpx), scheduler (APScheduler)."""
