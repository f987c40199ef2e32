// File: daemon/ledger/env.cc
//
// The VFS shim: SQLite allocates each file as our EnvFile followed by the
// wrapped VFS's own file object; every method asks the env (for the four
// operations it knows) and then forwards to the wrapped file. Written by
// hand because SQLite's VFS interface is the only way to see its I/O;
// the shim only forwards and never changes what SQLite asked for.
#include "daemon/ledger/env.h"

#include <sqlite3.h>

#include <atomic>
#include <cerrno>
#include <cstddef>
#include <cstring>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {
namespace {

struct EnvFile {
  sqlite3_file base;  // first: SQLite sees an sqlite3_file
  LedgerEnv* env;
  const char* path;    // valid until xClose (SQLite's guarantee); may be null
  sqlite3_file* real;  // the wrapped VFS's file, right after this struct
};

// Offset of the wrapped file inside our allocation, aligned for it.
constexpr size_t kRealOffset =
    (sizeof(EnvFile) + alignof(std::max_align_t) - 1) /
    alignof(std::max_align_t) * alignof(std::max_align_t);

EnvFile* Cast(sqlite3_file* f) { return reinterpret_cast<EnvFile*>(f); }

}  // namespace

// Our VFS: SQLite's struct first (SQLite passes back a pointer to it), then
// the env and the wrapped VFS.
struct EnvVfs {
  sqlite3_vfs vfs;
  LedgerEnv* env;
  sqlite3_vfs* real;
};

namespace {

EnvVfs* Of(sqlite3_vfs* vfs) { return reinterpret_cast<EnvVfs*>(vfs); }
sqlite3_vfs* Real(sqlite3_vfs* vfs) { return Of(vfs)->real; }

// The errno of the last fault injected on this thread, for xGetLastError
// (SQLite asks after the failed call, on the same thread; errno itself may
// have changed by then).
thread_local int injected_errno = 0;

// Asks the env; on a fault records its errno and returns it.
int Ask(EnvFile* f, LedgerEnv::Op op, sqlite3_int64 offset, int64_t size) {
  const int e =
      f->env->Before(op, f->path == nullptr ? "" : f->path, offset, size);
  if (e != 0) injected_errno = errno = e;
  return e;
}

int Close(sqlite3_file* file) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xClose(f->real);
}

int Read(sqlite3_file* file, void* buf, int amt, sqlite3_int64 offset) {
  EnvFile* f = Cast(file);
  if (Ask(f, LedgerEnv::Op::kRead, offset, amt) != 0) {
    return SQLITE_IOERR_READ;
  }
  return f->real->pMethods->xRead(f->real, buf, amt, offset);
}

int Write(sqlite3_file* file, const void* buf, int amt, sqlite3_int64 offset) {
  EnvFile* f = Cast(file);
  if (const int e = Ask(f, LedgerEnv::Op::kWrite, offset, amt); e != 0) {
    return e == ENOSPC ? SQLITE_FULL : SQLITE_IOERR_WRITE;
  }
  return f->real->pMethods->xWrite(f->real, buf, amt, offset);
}

int Truncate(sqlite3_file* file, sqlite3_int64 size) {
  EnvFile* f = Cast(file);
  if (Ask(f, LedgerEnv::Op::kTruncate, size, 0) != 0) {
    return SQLITE_IOERR_TRUNCATE;
  }
  return f->real->pMethods->xTruncate(f->real, size);
}

int Sync(sqlite3_file* file, int flags) {
  EnvFile* f = Cast(file);
  if (Ask(f, LedgerEnv::Op::kSync, 0, 0) != 0) return SQLITE_IOERR_FSYNC;
  return f->real->pMethods->xSync(f->real, flags);
}

int FileSize(sqlite3_file* file, sqlite3_int64* size) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xFileSize(f->real, size);
}
int Lock(sqlite3_file* file, int level) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xLock(f->real, level);
}
int Unlock(sqlite3_file* file, int level) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xUnlock(f->real, level);
}
int CheckReservedLock(sqlite3_file* file, int* out) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xCheckReservedLock(f->real, out);
}
int FileControl(sqlite3_file* file, int op, void* arg) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xFileControl(f->real, op, arg);
}
int SectorSize(sqlite3_file* file) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xSectorSize(f->real);
}
int DeviceCharacteristics(sqlite3_file* file) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xDeviceCharacteristics(f->real);
}
int ShmMap(sqlite3_file* file, int page, int size, int extend,
           void volatile** out) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xShmMap(f->real, page, size, extend, out);
}
int ShmLock(sqlite3_file* file, int offset, int n, int flags) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xShmLock(f->real, offset, n, flags);
}
void ShmBarrier(sqlite3_file* file) {
  EnvFile* f = Cast(file);
  f->real->pMethods->xShmBarrier(f->real);
}
int ShmUnmap(sqlite3_file* file, int remove) {
  EnvFile* f = Cast(file);
  return f->real->pMethods->xShmUnmap(f->real, remove);
}
// Memory-mapped reads would pass the env by; the ledger never turns them
// on (PRAGMA mmap_size stays 0: an I/O error there is a SIGBUS), and the
// shim declines them so SQLite reads through xRead.
int Fetch(sqlite3_file*, sqlite3_int64, int, void** out) {
  *out = nullptr;
  return SQLITE_OK;
}
int Unfetch(sqlite3_file* file, sqlite3_int64 offset, void* page) {
  EnvFile* f = Cast(file);
  if (page == nullptr) return SQLITE_OK;
  return f->real->pMethods->xUnfetch(f->real, offset, page);
}

const sqlite3_io_methods kMethods = {
    3,
    Close,
    Read,
    Write,
    Truncate,
    Sync,
    FileSize,
    Lock,
    Unlock,
    CheckReservedLock,
    FileControl,
    SectorSize,
    DeviceCharacteristics,
    ShmMap,
    ShmLock,
    ShmBarrier,
    ShmUnmap,
    Fetch,
    Unfetch,
};

int Open(sqlite3_vfs* vfs, const char* name, sqlite3_file* file, int flags,
         int* out_flags) {
  EnvFile* f = Cast(file);
  f->base.pMethods = nullptr;
  f->env = Of(vfs)->env;
  f->path = name;
  f->real =
      reinterpret_cast<sqlite3_file*>(reinterpret_cast<char*>(f) + kRealOffset);
  sqlite3_vfs* real = Real(vfs);
  const int rc = real->xOpen(real, name, f->real, flags, out_flags);
  // Only a file that opened gets methods: SQLite then calls xClose.
  if (rc == SQLITE_OK && f->real->pMethods != nullptr) {
    f->base.pMethods = &kMethods;
  }
  return rc;
}

int Delete(sqlite3_vfs* vfs, const char* name, int sync_dir) {
  return Real(vfs)->xDelete(Real(vfs), name, sync_dir);
}
int Access(sqlite3_vfs* vfs, const char* name, int flags, int* out) {
  return Real(vfs)->xAccess(Real(vfs), name, flags, out);
}
int FullPathname(sqlite3_vfs* vfs, const char* name, int n, char* out) {
  return Real(vfs)->xFullPathname(Real(vfs), name, n, out);
}
void* DlOpen(sqlite3_vfs* vfs, const char* name) {
  return Real(vfs)->xDlOpen(Real(vfs), name);
}
void DlError(sqlite3_vfs* vfs, int n, char* out) {
  Real(vfs)->xDlError(Real(vfs), n, out);
}
void (*DlSym(sqlite3_vfs* vfs, void* handle, const char* symbol))(void) {
  return Real(vfs)->xDlSym(Real(vfs), handle, symbol);
}
void DlClose(sqlite3_vfs* vfs, void* handle) {
  Real(vfs)->xDlClose(Real(vfs), handle);
}
int Randomness(sqlite3_vfs* vfs, int n, char* out) {
  return Real(vfs)->xRandomness(Real(vfs), n, out);
}
int Sleep(sqlite3_vfs* vfs, int micros) {
  return Real(vfs)->xSleep(Real(vfs), micros);
}
int CurrentTime(sqlite3_vfs* vfs, double* out) {
  return Real(vfs)->xCurrentTime(Real(vfs), out);
}
int GetLastError(sqlite3_vfs* vfs, int n, char* out) {
  // Sticky: SQLite may ask more than once, after more I/O of its own (the
  // rollback). Only an env that injects faults ever sets it.
  if (const int e = injected_errno; e != 0) return e;
  return Real(vfs)->xGetLastError(Real(vfs), n, out);
}
int CurrentTimeInt64(sqlite3_vfs* vfs, sqlite3_int64* out) {
  return Real(vfs)->xCurrentTimeInt64(Real(vfs), out);
}

std::atomic<int> next_vfs{0};

}  // namespace

LedgerEnv::LedgerEnv()
    : vfs_name_(absl::StrCat("plumbline-env-", next_vfs.fetch_add(1))) {
  sqlite3_initialize();
  sqlite3_vfs* real = sqlite3_vfs_find(nullptr);  // the default, "unix"
  vfs_ = std::make_unique<EnvVfs>();
  vfs_->env = this;
  vfs_->real = real;
  sqlite3_vfs& v = vfs_->vfs;
  std::memset(&v, 0, sizeof(v));
  v.iVersion = 2;
  v.szOsFile = static_cast<int>(kRealOffset) + real->szOsFile;
  v.mxPathname = real->mxPathname;
  v.zName = vfs_name_.c_str();
  v.pAppData = nullptr;
  v.xOpen = Open;
  v.xDelete = Delete;
  v.xAccess = Access;
  v.xFullPathname = FullPathname;
  v.xDlOpen = DlOpen;
  v.xDlError = DlError;
  v.xDlSym = DlSym;
  v.xDlClose = DlClose;
  v.xRandomness = Randomness;
  v.xSleep = Sleep;
  v.xCurrentTime = CurrentTime;
  v.xGetLastError = GetLastError;
  v.xCurrentTimeInt64 = CurrentTimeInt64;
  sqlite3_vfs_register(&v, /*makeDflt=*/0);
}

LedgerEnv::~LedgerEnv() { sqlite3_vfs_unregister(&vfs_->vfs); }

int LedgerEnv::Before(Op, absl::string_view, int64_t, int64_t) { return 0; }

LedgerEnv* LedgerEnv::Default() {
  static LedgerEnv* const env = new LedgerEnv();
  return env;
}

absl::string_view LedgerOpName(LedgerEnv::Op op) {
  switch (op) {
    case LedgerEnv::Op::kRead:
      return "read";
    case LedgerEnv::Op::kWrite:
      return "write";
    case LedgerEnv::Op::kSync:
      return "sync";
    case LedgerEnv::Op::kTruncate:
      break;
  }
  return "truncate";
}

}  // namespace plumbline::daemon
