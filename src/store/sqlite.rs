//! The embedded back end: one SQLite file (bundled library, no server), created on first
//! use.
//!
//! The file runs in WAL mode, so readers (`export`, SQL users) see the last committed
//! run while a refresh writes the next. A refresh holds SQLite's write lock (`BEGIN
//! IMMEDIATE`) from start to commit; a second one is refused at once. The lock belongs
//! to the process: when it dies, SQLite rolls the unfinished transaction back on the
//! next open.

use std::path::{Path, PathBuf};

use rusqlite::types::{ToSqlOutput, ValueRef};
use rusqlite::{Connection, ErrorCode, OpenFlags};

use super::{Backend, Value};
use crate::error::{Error, Result};

/// A SQLite run store.
pub struct Sqlite {
    conn: Connection,
    path: PathBuf,
}

impl Sqlite {
    /// Open (or create) the store file at `path`.
    pub fn open(path: &Path) -> Result<Sqlite> {
        if path.is_dir() {
            return Err(Error::Usage(format!(
                "store `{}` is a folder; give a file path such as `{}`",
                path.display(),
                path.join("samekey-store.db").display()
            )));
        }
        if let Some(parent) = path.parent().filter(|p| !p.as_os_str().is_empty()) {
            if !parent.is_dir() {
                return Err(Error::Usage(format!(
                    "store `{}`: folder `{}` does not exist; create it first",
                    path.display(),
                    parent.display()
                )));
            }
        }
        let conn = Connection::open_with_flags(
            path,
            OpenFlags::SQLITE_OPEN_READ_WRITE
                | OpenFlags::SQLITE_OPEN_CREATE
                | OpenFlags::SQLITE_OPEN_NO_MUTEX,
        )
        .map_err(|e| Error::Usage(format!("store `{}`: cannot open: {e}", path.display())))?;
        let s = Sqlite {
            conn,
            path: path.to_path_buf(),
        };
        // A file that is not a SQLite database fails on the first statement.
        s.conn
            .execute_batch(
                "PRAGMA journal_mode = WAL; PRAGMA synchronous = FULL; \
                 PRAGMA foreign_keys = ON;",
            )
            .map_err(|e| {
                Error::Usage(format!(
                    "store `{}` is not a samekey store (not a SQLite database: {e}); give a \
                     new file name or the right file",
                    path.display()
                ))
            })?;
        // Never wait for another writer: refuse at once.
        s.conn
            .busy_timeout(std::time::Duration::from_millis(0))
            .map_err(|e| s.err(e))?;
        Ok(s)
    }

    fn err(&self, e: rusqlite::Error) -> Error {
        Error::Internal(format!("store `{}`: {e}", self.path.display()))
    }
}

/// `$1` placeholders as SQLite's `?1`.
fn placeholders(sql: &str) -> String {
    let mut out = String::with_capacity(sql.len());
    let mut chars = sql.chars().peekable();
    while let Some(c) = chars.next() {
        if c == '$' && chars.peek().is_some_and(|d| d.is_ascii_digit()) {
            out.push('?');
        } else {
            out.push(c);
        }
    }
    out
}

impl rusqlite::ToSql for Value {
    fn to_sql(&self) -> rusqlite::Result<ToSqlOutput<'_>> {
        Ok(match self {
            Value::Null => ToSqlOutput::Borrowed(ValueRef::Null),
            Value::Int(i) => ToSqlOutput::Borrowed(ValueRef::Integer(*i)),
            Value::Real(f) => ToSqlOutput::Borrowed(ValueRef::Real(*f)),
            Value::Text(s) => ToSqlOutput::Borrowed(ValueRef::Text(s.as_bytes())),
        })
    }
}

fn value_of(v: ValueRef<'_>) -> Value {
    match v {
        ValueRef::Null => Value::Null,
        ValueRef::Integer(i) => Value::Int(i),
        ValueRef::Real(f) => Value::Real(f),
        ValueRef::Text(t) | ValueRef::Blob(t) => Value::Text(String::from_utf8_lossy(t).into()),
    }
}

impl Backend for Sqlite {
    fn batch(&mut self, sql: &str) -> Result<()> {
        self.conn.execute_batch(sql).map_err(|e| self.err(e))
    }

    fn exec(&mut self, sql: &str, params: &[Value]) -> Result<u64> {
        let mut st = self
            .conn
            .prepare_cached(&placeholders(sql))
            .map_err(|e| self.err(e))?;
        let n = st
            .execute(rusqlite::params_from_iter(params.iter()))
            .map_err(|e| Error::Internal(format!("store `{}`: {e}", self.path.display())))?;
        Ok(n as u64)
    }

    fn query(&mut self, sql: &str, params: &[Value]) -> Result<Vec<Vec<Value>>> {
        let path = self.path.display().to_string();
        let err = |e: rusqlite::Error| Error::Internal(format!("store `{path}`: {e}"));
        let mut st = self.conn.prepare_cached(&placeholders(sql)).map_err(err)?;
        let n = st.column_count();
        let mut rows = st
            .query(rusqlite::params_from_iter(params.iter()))
            .map_err(err)?;
        let mut out = Vec::new();
        while let Some(row) = rows.next().map_err(err)? {
            let mut r = Vec::with_capacity(n);
            for i in 0..n {
                r.push(value_of(row.get_ref(i).map_err(err)?));
            }
            out.push(r);
        }
        Ok(out)
    }

    fn insert_many(&mut self, table: &str, columns: &[&str], rows: &[Vec<Value>]) -> Result<()> {
        let marks: Vec<String> = (1..=columns.len()).map(|i| format!("?{i}")).collect();
        let sql = format!(
            "INSERT INTO {table} ({}) VALUES ({})",
            columns.join(", "),
            marks.join(", ")
        );
        let path = self.path.display().to_string();
        let err = |e: rusqlite::Error| Error::Internal(format!("store `{path}`: {e}"));
        let mut st = self.conn.prepare_cached(&sql).map_err(err)?;
        for row in rows {
            st.execute(rusqlite::params_from_iter(row.iter()))
                .map_err(err)?;
        }
        Ok(())
    }

    fn begin_locked(&mut self) -> Result<()> {
        match self.conn.execute_batch("BEGIN IMMEDIATE") {
            Ok(()) => Ok(()),
            Err(rusqlite::Error::SqliteFailure(f, _))
                if matches!(f.code, ErrorCode::DatabaseBusy | ErrorCode::DatabaseLocked) =>
            {
                Err(Error::Usage(format!(
                    "store `{}` is busy: another refresh is writing to it. Wait until it has \
                     finished and run again (the lock is released when that process ends)",
                    self.path.display()
                )))
            }
            Err(e) => Err(self.err(e)),
        }
    }

    fn commit(&mut self) -> Result<()> {
        self.conn.execute_batch("COMMIT").map_err(|e| self.err(e))
    }

    fn rollback(&mut self) -> Result<()> {
        self.conn.execute_batch("ROLLBACK").map_err(|e| self.err(e))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn placeholders_become_question_marks() {
        assert_eq!(
            placeholders("SELECT a FROM t WHERE b = $1 AND c = $12 AND d = '$x'"),
            "SELECT a FROM t WHERE b = ?1 AND c = ?12 AND d = '$x'"
        );
    }
}
