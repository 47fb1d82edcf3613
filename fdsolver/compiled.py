"""numba's ``njit`` as every compiled loop of fdsolver uses it: cached on disk, no GIL, a lean first load.

:data:`njit` is ``numba.njit(cache=True, nogil=True)``, with the compilation cache in fdsolver's own folder of
the user's cache (:func:`cache_folder`), each kernel loaded from it without numba's compile set-up, with its
bitcode for linking parsed only if a later compile needs it and without importing the modules of numba's own
helpers compiled into it, and numba's numpy array-math module, where a kernel needs it, imported without
scipy.linalg (below).  numba's runtime library is compiled once and kept in the same folder, and numba's
extension entry points are run only where a kernel must be compiled.
Importing this module imports numba; the modules that define kernels import it, and a module that compiles a
loop only when it is first called (a table's cubic spline) imports it then.
"""

from __future__ import annotations

import contextlib
import os
import tempfile


def cache_folder() -> str | None:
    """The folder fdsolver's compiled kernels are cached in, or None where the user chose one for numba.

    ``NUMBA_CACHE_DIR`` set by the user: numba's own rule (None here).  Otherwise ``fdsolver/numba`` in the
    user's cache folder (``XDG_CACHE_HOME`` if it is an absolute path, else ``~/.cache``), or, where that
    cannot be made or written (or the process has no home), ``fdsolver-UID/numba`` in the temp folder: made
    private to the user (mode 0700) and used only if the user owns it and nobody else may write to it, since
    the cache holds machine code the process will run.  Not numba's default, the ``__pycache__`` beside the
    installed source: pip removes only the files it installed, so the cache files kept an uninstalled
    package's folder alive in site-packages, and that folder then shadowed a later editable install (``import
    fdsolver`` found a namespace package with nothing in it; seen in development).  numba names each source
    folder's cache by its path, so two installs never share entries.
    """
    if os.environ.get("NUMBA_CACHE_DIR"):
        return None
    home = os.path.expanduser("~")  # "~" itself where the process has no home: never a folder under the cwd
    base = os.environ.get("XDG_CACHE_HOME", "")
    if not os.path.isabs(base):  # unset, empty or relative: the XDG base directory rule says ~/.cache
        base = os.path.join(home, ".cache")
    uid = os.getuid() if hasattr(os, "getuid") else None
    shared = os.path.join(tempfile.gettempdir(), "fdsolver" if uid is None else f"fdsolver-{uid}")
    for top in (os.path.join(base, "fdsolver"), shared):
        if not os.path.isabs(top):
            continue
        folder = os.path.join(top, "numba")
        try:
            os.makedirs(top, mode=0o700, exist_ok=True)
            os.makedirs(folder, exist_ok=True)
            if top == shared and uid is not None:
                st = os.stat(top)
                if st.st_uid != uid or st.st_mode & 0o022:
                    continue  # another user's folder, or one others may write to: not trusted
        except OSError:
            continue
        if os.access(folder, os.W_OK):
            return folder
    return None  # nowhere usable: numba's own locators (beside the source, then its user-wide folder)


def _jit():
    """numba.njit(cache=True, nogil=True), each kernel's cache in :func:`cache_folder` (never raising at import).

    numba takes a function's cache folder from ``numba.core.config.CACHE_DIR`` when the function is
    decorated; it is set to fdsolver's folder only for the length of each decoration, so the caches of other
    numba users in the same process, and the environment child processes inherit, are left as they were.
    (A thread of the same process decorating its own cached function in that instant would put its cache
    in fdsolver's folder; nothing else changes for it.)
    """
    numba = _import_numba()
    from numba.core import config

    decorate = numba.njit(cache=True, nogil=True)
    folder = cache_folder()

    def njit(fn):
        saved = config.CACHE_DIR
        if folder is not None:
            config.CACHE_DIR = folder
        try:
            dispatcher = decorate(fn)
        finally:
            config.CACHE_DIR = saved
        if not _lean_cache_loads(dispatcher):
            _load_numpy_typing_without_scipy_linalg()  # numba's own first load sets its compiler up
        return dispatcher

    return njit


def _import_numba():
    """``import numba``, with PyYAML imported only when numba reads a configuration file with it.

    numba's configuration imports PyYAML at numba's import, to read a ``.numba_config.yaml`` in the working
    folder should there be one (when numba is imported and at every compile): 12-14 ms of CPU (measured while
    other work ran: DEVELOPERS.md, session 18) in a process that has no such file.  Here numba is imported with PyYAML
    hidden (:func:`fdsolver.absent.absent`), and then told what its own import would have found: PyYAML is
    there if it is installed, as a stand-in that imports it at the first use (:class:`_ImportedOnUse`).  So a
    configuration file is read as numba reads it, PyYAML imported then.  Only where numba and PyYAML are not
    imported yet, the working folder has no such file (numba reads it as it is imported) and no other thread
    runs (:func:`_alone`; one importing PyYAML in that instant would be refused); otherwise a plain import.
    """
    import importlib.util
    import sys

    if "numba" in sys.modules or "yaml" in sys.modules or not _alone() \
            or os.path.isfile(".numba_config.yaml"):  # numba reads it as it is imported: with PyYAML
        import numba

        return numba
    from fdsolver.absent import absent

    installed = importlib.util.find_spec("yaml") is not None
    with absent("yaml"):
        import numba
    from numba.core import config

    if installed and getattr(config, "_HAVE_YAML", True) is False and not hasattr(config, "yaml"):
        config.yaml = _ImportedOnUse("yaml")
        config._HAVE_YAML = True
    return numba


class _ImportedOnUse:
    """A module imported at the first attribute read (:func:`_import_numba`)."""

    def __init__(self, name: str):
        self._name = name

    def __getattr__(self, attr):
        import importlib

        return getattr(importlib.import_module(self._name), attr)


def _lean_cache_loads(dispatcher) -> bool:
    """Let ``dispatcher`` load its cached machine code without numba's compile set-up; False where it cannot.

    numba's cache refreshes the whole compile context before it loads a kernel: it imports and installs every
    lowering registry numba has (its numpy, random, polynomial, typed containers ...), 0.1 to 0.2 s of CPU on
    the first kernel a process loads.  Loading needs none of it: the cached library is linked machine code,
    and only numba's runtime (array allocation) must be ready, which ``rtsys.initialize`` does.  The load
    itself reads the library's names from its object file and leaves its bitcode unparsed
    (:func:`_deferred_linking`), and rebuilds the environments of numba's helpers in it without importing
    their modules (:func:`_helper_environments`); a module it does import to rebuild an environment (one of
    another package) is imported with scipy.linalg hidden (:func:`_without_scipy_linalg`).
    Where the kernel is not in the cache, numba compiles it, and its compiler refreshes the context itself,
    after the same import (:func:`_load_numpy_typing_without_scipy_linalg`).

    Before a dispatcher's first call numba also runs the ``numba_extensions`` entry points of the installed
    packages (``numba.core.entrypoints.init_all``, once per process), which reads the metadata of every
    installed distribution: 28-41 ms of CPU with the 80 packages of the development environment (measured:
    DEVELOPERS.md, session 18), more with more packages.  Extensions add types and functions for numba to
    compile with; a load from the cache compiles nothing, and fdsolver's kernels take only numpy arrays and
    numbers.  So this dispatcher runs them only where it must compile (the cache has no kernel for the call),
    before numba's compiler starts; numba still runs them before the first compile of any other dispatcher.

    The first call types its arguments without importing numpy's masked arrays (:func:`_masked_arrays_unloaded`).

    Only this dispatcher is changed (other numba users in the process keep numba's own cache and hooks).
    False, and nothing changed, where numba's cache or dispatcher does not have the methods this relies on
    (another numba version).
    """
    from numba.core import entrypoints
    from numba.core.runtime import rtsys

    cache = getattr(dispatcher, "_cache", None)
    load = getattr(cache, "_load_overload", None)
    guard = getattr(cache, "_guard_against_spurious_io_errors", None)
    if load is None or guard is None or not callable(getattr(dispatcher, "_compilation_chain_init_hook", None)) \
            or not callable(getattr(entrypoints, "init_all", None)) or not callable(getattr(dispatcher, "typeof_pyval", None)):
        return False

    def load_overload(sig, target_context):
        with _deferred_linking(target_context.codegen()), _runtime_from_cache():
            rtsys.initialize(target_context)  # once per process
        found = None
        with _without_scipy_linalg(), _deferred_linking(target_context.codegen()), _helper_environments(), guard():
            found = load(sig, target_context)  # the guard swallows an error of the cache files
        if found is None:  # numba compiles it next: with the extensions, after the same import
            entrypoints.init_all()
            _load_numpy_typing_without_scipy_linalg()
        return found

    cache.load_overload = load_overload
    dispatcher._compilation_chain_init_hook = _nothing  # the extensions wait for a compile (above)
    typeof = dispatcher.typeof_pyval

    def typeof_pyval(val):
        with _masked_arrays_unloaded(val):
            return typeof(val)

    dispatcher.typeof_pyval = typeof_pyval
    return True


#: the attribute that marks a thread as one that imports nothing and never touches numpy, SciPy or PyYAML, the
#: modules swapped here (the local sweep workers' watch on their parent, which only sleeps and asks the OS for
#: the parent's id; :mod:`fdsolver.parallel.executors`)
TOUCHES_NO_MODULES = "fdsolver_touches_no_modules"


def _alone() -> bool:
    """True where no other thread of this process could import a module or touch the ones swapped here
    meanwhile: every other thread running is marked with :data:`TOUCHES_NO_MODULES`.  The swaps (a module
    hidden from the import system, a stand-in for numpy's masked arrays) are made only then."""
    import threading

    if threading.active_count() == 1:
        return True
    me = threading.current_thread()
    return all(t is me or getattr(t, TOUCHES_NO_MODULES, False) for t in threading.enumerate())


def _masked_arrays_unloaded(val):
    """A context in which ``numpy.ma`` stands for a namespace whose ``MaskedArray`` nothing is an instance of,
    while numba types the plain array ``val`` (a kernel's first call); otherwise one that changes nothing.

    numba's type of an array first asks whether it is a ``numpy.ma.MaskedArray``, and numpy imports its
    masked-array package at that first mention: 14-25 ms of CPU (measured: DEVELOPERS.md, session 18) in a
    process that never makes a masked array.  A value whose type is exactly ``numpy.ndarray`` is no masked
    array (that is a subclass), so the answer is the same.  Only while ``numpy.ma`` is not imported yet (then
    no masked array exists) and no other thread runs (:func:`_alone`; one of them reading ``numpy.ma`` in that
    instant would get the stand-in); numpy imports it as usual at the next mention after the block.
    """
    import sys

    np = sys.modules.get("numpy")
    if np is None or type(val) is not np.ndarray or "numpy.ma" in sys.modules or "ma" in vars(np) \
            or not _alone():
        return contextlib.nullcontext()
    return _swapped(np, "ma", _NoMaskedArrays)


class _NoMaskedArrays:
    """Stands for ``numpy.ma`` while it is not imported (:func:`_masked_arrays_unloaded`)."""

    class MaskedArray:
        """No value is an instance of this class."""


def _runtime_from_cache():
    """A context in which numba's runtime library (``rtsys.initialize``: the reference counts and the memory
    helpers every kernel that makes an array calls) is loaded from fdsolver's cache folder instead of compiled.

    numba compiles that small library with LLVM in every process before its first kernel runs: 24-30 ms of CPU
    here (measured: DEVELOPERS.md, session 18), a twentieth of a cold ``fdsolver solve``.  Here it is compiled
    once, its machine code and bitcode kept as numba keeps a kernel's (``serialize_using_object_code``) in a file
    of :func:`cache_folder` named for the numba, llvmlite and Python versions and the machine numba compiles for
    (``magic_tuple``: target triple, CPU name and features), and later loaded from it as a cached kernel is
    (:func:`_deferred_linking`).  An unreadable file is compiled again and replaced; another numba, llvmlite,
    Python or machine has a file of its own.  A context that changes nothing where there is no cache folder or
    numba lacks what this relies on.
    """
    from numba.core.runtime import nrtdynmod

    compile_runtime = getattr(nrtdynmod, "compile_nrt_functions", None)
    create_module = getattr(nrtdynmod, "create_nrt_module", None)
    if compile_runtime is None or create_module is None:
        return contextlib.nullcontext()

    def cached(ctx):  # numba calls it once per process, when it sets the runtime up
        folder = cache_folder()
        path = None if folder is None else _runtime_file(folder, ctx.codegen())
        if path is None:
            return compile_runtime(ctx)
        try:
            with open(path, "rb") as f:
                return ctx.codegen().unserialize_library(_read_state(f.read()))
        except (OSError, ValueError, TypeError, AttributeError, RuntimeError):
            pass  # not there yet, or not readable: compile it and keep it
        module, library = create_module(ctx)  # numba's compile_nrt_functions, its machine code kept
        library.enable_object_caching()
        library.add_ir_module(module)
        library.finalize()
        try:
            _write_atomically(path, _state_bytes(library.serialize_using_object_code()))
        except (OSError, AttributeError, TypeError, ValueError, RuntimeError):
            pass
        return library

    return _swapped(nrtdynmod, "compile_nrt_functions", cached)


def _runtime_file(folder: str, codegen) -> str | None:
    """The file of numba's runtime library for this numba, llvmlite, Python and machine (None where numba's
    code generator cannot say what it compiles for)."""
    import hashlib
    import sys

    import llvmlite
    import numba

    magic = getattr(codegen, "magic_tuple", None)
    if magic is None:
        return None
    key = repr((numba.__version__, llvmlite.__version__, sys.implementation.cache_tag, magic())).encode()
    return os.path.join(folder, f"runtime-{hashlib.sha256(key).hexdigest()[:24]}.bin")


def _state_bytes(state) -> bytes:
    """numba's serialized library ``(name, "object", (machine code, bitcode))`` as bytes: the name, then each
    part, each preceded by its length (8 bytes, little-endian)."""
    name, kind, (code, bitcode) = state
    if kind != "object":
        raise ValueError(kind)
    parts = (name.encode("utf-8"), bytes(code), bytes(bitcode))
    return b"".join(len(part).to_bytes(8, "little") + part for part in parts)


def _read_state(data: bytes):
    """The inverse of :func:`_state_bytes`; ValueError for anything else (the file is then compiled anew)."""
    parts, at = [], 0
    for _ in range(3):
        if at + 8 > len(data):
            raise ValueError("short runtime file")
        size = int.from_bytes(data[at:at + 8], "little")
        at += 8
        if at + size > len(data):
            raise ValueError("short runtime file")
        parts.append(data[at:at + size])
        at += size
    if at != len(data):
        raise ValueError("runtime file too long")
    return parts[0].decode("utf-8"), "object", (parts[1], parts[2])


def _write_atomically(path: str, data: bytes) -> None:
    """Write ``data`` to a temporary file in ``path``'s folder and rename it over ``path`` (no reader ever sees
    a part of it)."""
    fd, tmp = tempfile.mkstemp(dir=os.path.dirname(path), prefix=".runtime-", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def _nothing() -> None:
    """Does nothing: a dispatcher's hook before its first call, where the extensions wait for a compile."""


def _deferred_linking(codegen):
    """A context in which ``codegen`` loads a cached library with its bitcode for linking left unparsed.

    A library in numba's cache holds its machine code (an object file) and the LLVM bitcode of the same
    functions, kept so that a kernel compiled later may inline them.  numba parses that bitcode at every load
    and walks every function and global in it, to record which names the library defines: about two thirds of
    the CPU of a cold solve's kernel loads (they took 0.21-0.24 s with it and 0.07 s without it for a
    square-well pair, measured: DEVELOPERS.md, session 16).  Under this context the names come from the
    object file's symbol table instead (:func:`_object_file_symbols`: the global and weak symbols it defines,
    the names a lookup of the machine code can find), and the bitcode is parsed only if a later compile links
    the library in (:func:`_deferred_link_class`).  numba holds its compiler lock while it loads, so no other
    load sees the class swapped.  A context that changes nothing where numba's code generator lacks what this
    relies on.
    """
    library = _deferred_link_class(getattr(type(codegen), "_library_class", None))
    if library is None or not hasattr(getattr(codegen, "_engine", None), "_defined_symbols"):
        return contextlib.nullcontext()
    return _swapped(codegen, "_library_class", library)


def _helper_environments():
    """A context in which a cached kernel's environments of numba's own helpers are rebuilt without importing
    the helpers' modules.

    Every compiled function has an environment: the globals of the module that defined it and the Python
    constants it uses.  A kernel's library carries those of every numba helper compiled into it (``np.empty``'s,
    from ``numba.np.arrayobj``, in nearly all of them), and numba rebuilds each at a load by importing that
    module to take its globals.  ``numba.np.arrayobj`` with what it imports costs 0.06-0.07 s of CPU
    (measured: DEVELOPERS.md, session 16), although no loaded kernel reads those globals: only object-mode code
    looks names up in them; compiled (nopython) code, numba's helpers included, reads the constants alone.  So
    here an environment of a module of numba (``numba.*``) not yet imported gets its constants and its name
    and no other globals, and the module is not imported; numba imports it as usual when a later compile needs
    it.  The environments of fdsolver's own modules, and of any imported module, are numba's as before.
    numba holds its compiler lock while it loads, so no other load sees the swap.  A context that changes
    nothing where numba's environments lack what this relies on.
    """
    import sys

    from numba.core import environment

    rebuild = getattr(environment, "_rebuild_env", None)
    memo = getattr(getattr(environment, "Environment", None), "_memo", None)
    if rebuild is None or memo is None or not hasattr(environment, "lookup_environment"):
        return contextlib.nullcontext()

    def rebuild_without_import(modname, consts, env_name):
        if not (isinstance(modname, str) and modname.startswith("numba.") and modname not in sys.modules):
            return rebuild(modname, consts, env_name)
        env = environment.lookup_environment(env_name)
        if env is None:  # numba's rebuild, with only the name among the globals
            env = environment.Environment({"__name__": modname})
            env.consts[:] = consts
            env.env_name = env_name
            memo[env_name] = env
        return env

    return _swapped(environment, "_rebuild_env", rebuild_without_import)


@contextlib.contextmanager
def _swapped(owner, name: str, value):
    """``owner.name`` is ``value`` within the block; afterwards it is what it was (removed again where ``owner``
    only inherited it, as an instance does its class's attribute)."""
    own = name in vars(owner)
    saved = vars(owner).get(name)
    setattr(owner, name, value)
    try:
        yield
    finally:
        if own:
            setattr(owner, name, saved)
        else:
            delattr(owner, name)


#: numba's library class -> its subclass that defers the bitcode (None where numba's class lacks a method it uses)
_DEFERRED = {}


def _deferred_link_class(base):
    """The subclass of numba's library class ``base`` whose bitcode for linking is parsed only when needed.

    ``_shared_module`` (numba's name for the bitcode module other libraries link in) is parsed from the kept
    bytes when first read; a name the object file did not list is looked up numba's way, after recording every
    name the parsed bitcode defines.  One class per base, made when first asked for (the base is numba's, known
    only once numba is imported); None where the base lacks a method this uses (another numba version).
    """
    if base in _DEFERRED:
        return _DEFERRED[base]
    needed = ("_unserialize", "enable_object_caching", "_set_compiled_object", "_finalize_final_module",
              "get_pointer_to_function")
    if base is None or not all(hasattr(base, name) for name in needed):
        _DEFERRED[base] = None
        return None

    class DeferredLinkLibrary(base):
        @property
        def _shared_module(self):
            pending = self.__dict__.pop("_pending_bitcode", None)
            if pending is not None:
                import llvmlite.binding as ll

                self.__dict__["_parsed_bitcode"] = ll.parse_bitcode(pending)
            return self.__dict__.get("_parsed_bitcode")

        @_shared_module.setter
        def _shared_module(self, value):
            self.__dict__.pop("_pending_bitcode", None)
            self.__dict__["_parsed_bitcode"] = value

        @classmethod
        def _unserialize(cls, codegen, state):
            name, kind, data = state
            names = _object_file_symbols(data[0]) if kind == "object" else None
            if names is None:  # not an object file this reads: numba's own load
                return super()._unserialize(codegen, state)
            object_code, shared_bitcode = data
            self = codegen.create_library(name)
            self.enable_object_caching()
            self._set_compiled_object(object_code)
            self.__dict__["_pending_bitcode"] = shared_bitcode
            self._finalize_final_module()
            codegen._engine._defined_symbols |= names
            return self

        def get_pointer_to_function(self, name):
            engine = self._codegen._engine
            if "_pending_bitcode" in self.__dict__ and not engine.is_symbol_defined(name):
                engine._load_defined_symbols(self._shared_module)  # numba's way: every name the bitcode defines
            return super().get_pointer_to_function(name)

    _DEFERRED[base] = DeferredLinkLibrary
    return DeferredLinkLibrary


def _object_file_symbols(data: bytes) -> set[str] | None:
    """The names of the global and weak symbols a 64-bit ELF object file defines; None for anything else.

    Reads the ELF header, the section headers and every symbol table (System V ABI, ELF-64 object file
    format): a symbol counts if its section index is not SHN_UNDEF (0) and its binding is STB_GLOBAL (1) or
    STB_WEAK (2).  None (the caller then does numba's own load) for another format (Mach-O, COFF, 32-bit ELF)
    or a file whose tables point outside it.
    """
    import struct

    if len(data) < 64 or data[:4] != b"\x7fELF" or data[4] != 2 or data[5] not in (1, 2):
        return None
    order = "<" if data[5] == 1 else ">"
    try:
        (shoff,) = struct.unpack_from(order + "Q", data, 0x28)
        shentsize, shnum = struct.unpack_from(order + "HH", data, 0x3A)
        if shentsize < 64 or shnum == 0:
            return None
        sections = [struct.unpack_from(order + "IIQQQQIIQQ", data, shoff + i * shentsize) for i in range(shnum)]
        names = set()
        for _name, kind, _flags, _addr, offset, size, link, _info, _align, entsize in sections:
            if kind != 2:  # SHT_SYMTAB
                continue
            if entsize < 24 or offset + size > len(data) or link >= shnum:
                return None
            table = sections[link][4]
            for at in range(offset, offset + size - entsize + 1, entsize):
                st_name, st_info, _other, st_shndx = struct.unpack_from(order + "IBBH", data, at)
                if st_shndx == 0 or st_info >> 4 not in (1, 2):
                    continue
                start = table + st_name
                end = data.index(b"\0", start)
                names.add(data[start:end].decode("utf-8"))
        return names
    except (struct.error, ValueError, UnicodeDecodeError):
        return None


def _without_scipy_linalg():
    """A context in which scipy.linalg cannot be imported, while numba's numpy array-math module
    (``numba.np.arraymath``) is not imported yet and no other thread runs; otherwise one that hides nothing.

    ``numba.np.arraymath`` imports ``scipy.linalg.cython_blas`` only to decide whether the inner products of its
    ``np.correlate`` and ``np.convolve`` may call BLAS.  The whole of scipy.linalg comes with it: about 0.25 s
    of CPU, a quarter of a cold ``fdsolver solve`` (measured in DEVELOPERS.md).  No kernel here calls those, so
    the module is imported with scipy.linalg hidden (:func:`fdsolver.absent.absent`); numba then computes those
    inner products (in any later kernel of the process) as a plain loop, with the same result to round-off.
    ``np.dot``, ``@`` and ``np.linalg`` are not affected: ``numba.np.linalg`` imports scipy.linalg when a
    kernel using them compiles.  Where scipy.linalg is already loaded nothing is hidden.  Never while other
    threads run (:func:`_alone`): one of them importing scipy.linalg in that instant would get an ImportError
    (with threads, numba's import brings scipy.linalg along).
    """
    import sys

    from fdsolver.absent import absent

    if "numba.np.arraymath" in sys.modules or not _alone():
        return contextlib.nullcontext()
    return absent("scipy.linalg")


def _load_numpy_typing_without_scipy_linalg():
    """Import numba's numpy array-math module (``numba.np.arraymath``) without scipy.linalg
    (:func:`_without_scipy_linalg`), before numba sets its compiler up (which imports it)."""
    with _without_scipy_linalg():
        import numba.np.arraymath  # noqa: F401


#: numba.njit(cache=True, nogil=True), cached in fdsolver's folder of the user's cache (cache_folder)
njit = _jit()
