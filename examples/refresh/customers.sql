-- Customers and revenue across two sources through the crosswalk (README, "Periodic
-- refresh"). Run with the store attached as `store`:
--   sqlite3 -cmd "ATTACH 'STORE.db' AS store" sales.db < examples/refresh/customers.sql
-- On PostgreSQL, load the two CSV files as tables in the store's database and drop the
-- `store.` prefix; the rest is the same SQL.
.mode csv
.import examples/refresh/shop_orders.csv shop_orders
.import examples/refresh/crm_invoices.csv crm_invoices
.mode column
.headers on

-- Source records against real customers.
SELECT source, COUNT(*) AS records, COUNT(DISTINCT customer_key) AS customers
FROM store.current_crosswalk GROUP BY source
UNION ALL
SELECT 'all sources', COUNT(*), COUNT(DISTINCT customer_key) FROM store.current_crosswalk;

-- Revenue per customer: web shop orders and CRM invoices, joined by customer key.
WITH revenue AS (
    SELECT cw.customer_key, CAST(o.amount AS REAL) AS amount
    FROM shop_orders o
    JOIN store.current_crosswalk cw ON cw.source = 'webshop' AND cw.source_id = o.account_id
    UNION ALL
    SELECT cw.customer_key, CAST(i.amount AS REAL)
    FROM crm_invoices i
    JOIN store.current_crosswalk cw ON cw.source = 'crm' AND cw.source_id = i.contact_id
)
SELECT COUNT(DISTINCT customer_key) AS paying_customers,
       ROUND(SUM(amount), 2) AS revenue,
       ROUND(SUM(amount) / COUNT(DISTINCT customer_key), 2) AS revenue_per_customer
FROM revenue;

-- The five customers with the most revenue over both sources.
WITH revenue AS (
    SELECT cw.customer_key, CAST(o.amount AS REAL) AS amount, 'webshop' AS source
    FROM shop_orders o
    JOIN store.current_crosswalk cw ON cw.source = 'webshop' AND cw.source_id = o.account_id
    UNION ALL
    SELECT cw.customer_key, CAST(i.amount AS REAL), 'crm'
    FROM crm_invoices i
    JOIN store.current_crosswalk cw ON cw.source = 'crm' AND cw.source_id = i.contact_id
)
SELECT customer_key, ROUND(SUM(amount), 2) AS revenue,
       COUNT(DISTINCT source) AS sources, COUNT(*) AS purchases
FROM revenue GROUP BY customer_key ORDER BY revenue DESC, customer_key LIMIT 5;
