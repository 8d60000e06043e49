// Test helper: an SQLite VFS over the default one that makes every write fail from the Nth on, as a full disk does.
//
// NOTES
//  1. While installed it is the default VFS, so the program's own connections use it without
//     knowing; uninstalling puts the default back.
//  2. Writes are xWrite, xTruncate and xSync on any file (database, write-ahead log); they are
//     counted from arm(n) on, and the nth and every later one fails with SQLITE_FULL and errno
//     ENOSPC. Reads, locks and the shared-memory index are never failed.
//  3. writes() tells how many writes were attempted since arm(): a run whose count stays below
//     n met no fault at all.
#pragma once
#include <sqlite3.h>

#include <cerrno>
#include <stdexcept>

namespace shelfstage::test {

class FaultyVfs {
 public:
  FaultyVfs() {
    base_ = sqlite3_vfs_find(nullptr);
    if (base_ == nullptr) throw std::runtime_error("no default SQLite VFS");
    vfs_ = *base_;
    vfs_.zName = "shelfstage-faulty";
    vfs_.szOsFile = static_cast<int>(sizeof(File)) + base_->szOsFile;
    vfs_.pAppData = this;
    vfs_.xOpen = &FaultyVfs::open;
    instance() = this;
    if (sqlite3_vfs_register(&vfs_, 1) != SQLITE_OK) throw std::runtime_error("cannot register the faulty VFS");
  }
  FaultyVfs(const FaultyVfs&) = delete;
  FaultyVfs& operator=(const FaultyVfs&) = delete;
  ~FaultyVfs() {
    sqlite3_vfs_unregister(&vfs_);
    sqlite3_vfs_register(base_, 1);
    instance() = nullptr;
  }

  /// Counts writes from now on; the nth (from 1) and every later one fails. n = 0: none fails.
  void arm(long n) {
    fail_from_ = n;
    writes_ = 0;
  }
  void disarm() { fail_from_ = 0; }
  long writes() const { return writes_; }

 private:
  struct File {
    sqlite3_file base;   // must come first: SQLite sees this
    sqlite3_file* real;  // the default VFS's file, in the bytes after this struct
  };

  static FaultyVfs*& instance() {
    static FaultyVfs* self = nullptr;
    return self;
  }
  static sqlite3_file* real(sqlite3_file* f) { return reinterpret_cast<File*>(f)->real; }

  /// True when this write must fail (NOTES 2).
  static bool fault() {
    FaultyVfs* self = instance();
    if (self == nullptr) return false;
    ++self->writes_;
    if (self->fail_from_ > 0 && self->writes_ >= self->fail_from_) {
      errno = ENOSPC;
      return true;
    }
    return false;
  }

  static int open(sqlite3_vfs* vfs, sqlite3_filename name, sqlite3_file* file, int open_flags, int* out_flags) {
    auto* self = static_cast<FaultyVfs*>(vfs->pAppData);
    auto* f = reinterpret_cast<File*>(file);
    f->real = reinterpret_cast<sqlite3_file*>(f + 1);
    f->base.pMethods = nullptr;
    const int rc = self->base_->xOpen(self->base_, name, f->real, open_flags, out_flags);
    if (rc == SQLITE_OK && f->real->pMethods != nullptr) {
      self->methods_ = *f->real->pMethods;  // one table: the default VFS uses one for its files
      self->methods_.xClose = [](sqlite3_file* x) { return real(x)->pMethods->xClose(real(x)); };
      self->methods_.xRead = [](sqlite3_file* x, void* buf, int n, sqlite3_int64 at) {
        return real(x)->pMethods->xRead(real(x), buf, n, at);
      };
      self->methods_.xWrite = [](sqlite3_file* x, const void* buf, int n, sqlite3_int64 at) {
        return fault() ? SQLITE_FULL : real(x)->pMethods->xWrite(real(x), buf, n, at);
      };
      self->methods_.xTruncate = [](sqlite3_file* x, sqlite3_int64 size) {
        return fault() ? SQLITE_IOERR_TRUNCATE : real(x)->pMethods->xTruncate(real(x), size);
      };
      self->methods_.xSync = [](sqlite3_file* x, int flags) {
        return fault() ? SQLITE_IOERR_FSYNC : real(x)->pMethods->xSync(real(x), flags);
      };
      self->methods_.xFileSize = [](sqlite3_file* x, sqlite3_int64* size) {
        return real(x)->pMethods->xFileSize(real(x), size);
      };
      self->methods_.xLock = [](sqlite3_file* x, int l) { return real(x)->pMethods->xLock(real(x), l); };
      self->methods_.xUnlock = [](sqlite3_file* x, int l) { return real(x)->pMethods->xUnlock(real(x), l); };
      self->methods_.xCheckReservedLock = [](sqlite3_file* x, int* out) {
        return real(x)->pMethods->xCheckReservedLock(real(x), out);
      };
      self->methods_.xFileControl = [](sqlite3_file* x, int op, void* arg) {
        return real(x)->pMethods->xFileControl(real(x), op, arg);
      };
      self->methods_.xSectorSize = [](sqlite3_file* x) { return real(x)->pMethods->xSectorSize(real(x)); };
      self->methods_.xDeviceCharacteristics = [](sqlite3_file* x) {
        return real(x)->pMethods->xDeviceCharacteristics(real(x));
      };
      self->methods_.xShmMap = [](sqlite3_file* x, int page, int size, int extend, void volatile** out) {
        return real(x)->pMethods->xShmMap(real(x), page, size, extend, out);
      };
      self->methods_.xShmLock = [](sqlite3_file* x, int offset, int n, int flags) {
        return real(x)->pMethods->xShmLock(real(x), offset, n, flags);
      };
      self->methods_.xShmBarrier = [](sqlite3_file* x) { real(x)->pMethods->xShmBarrier(real(x)); };
      self->methods_.xShmUnmap = [](sqlite3_file* x, int del) { return real(x)->pMethods->xShmUnmap(real(x), del); };
      // Memory-mapped reads would go around xRead; none are needed.
      self->methods_.iVersion = 2;
      self->methods_.xFetch = nullptr;
      self->methods_.xUnfetch = nullptr;
      f->base.pMethods = &self->methods_;
    }
    return rc;
  }

  sqlite3_vfs* base_ = nullptr;
  sqlite3_vfs vfs_{};
  sqlite3_io_methods methods_{};
  long fail_from_ = 0;
  long writes_ = 0;
};

}  // namespace shelfstage::test
