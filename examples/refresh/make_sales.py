"""Writes the invented sales files of the refresh walkthrough (deterministic, seed 14):
shop_orders.csv (web shop orders per account) and crm_invoices.csv (CRM invoices per
contact), for the ids of the demo data. Run from this folder: python3 make_sales.py"""
import csv
import random

rng = random.Random(14)
accounts = [r["account_id"] for r in csv.DictReader(open("../../demo-data/webshop_accounts.csv", encoding="utf-8"))]
contacts = [r["contact_id"] for r in csv.DictReader(open("../../demo-data/crm_contacts.csv", encoding="utf-8"))]
with open("shop_orders.csv", "w", newline="") as f:
    w = csv.writer(f)
    w.writerow(["order_id", "account_id", "amount"])
    n = 0
    for a in accounts:
        for _ in range(rng.choice([0, 1, 1, 2, 3])):
            n += 1
            w.writerow([f"O{n:06d}", a, f"{rng.uniform(5, 250):.2f}"])
with open("crm_invoices.csv", "w", newline="") as f:
    w = csv.writer(f)
    w.writerow(["invoice_id", "contact_id", "amount"])
    n = 0
    for c in contacts:
        for _ in range(rng.choice([0, 0, 1, 2])):
            n += 1
            w.writerow([f"I{n:06d}", c, f"{rng.uniform(20, 900):.2f}"])
