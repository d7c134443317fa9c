@echo off
rem pertbook drop folder - start the watcher (Windows).
rem
rem Copy this script beside the shared folder (or to a local folder such as C:\pertbook,
rem which is quicker). Then run:
rem
rem     drop-folder.cmd                               watch pertbook-drop beside this script
rem     drop-folder.cmd "\\fileserver\projects\plans"  watch that folder
rem     drop-folder.cmd "\\fileserver\projects\plans" --once   convert what is there, exit
rem
rem Anything after the folder is passed to "pertbook watch" (--interval, --workers,
rem --json, --iterations, ...). The folder gets inbox, outbox, archive and failed.
rem Use the \\server\share form: drive letters are not mapped for scheduled tasks.
rem
rem First run: makes a private virtual environment .pertbook-venv beside this script and
rem installs pertbook into it from, in this order of preference,
rem   1. a wheel beside the script                pertbook-*.whl (the newest)
rem   2. a copy of the project beside the script  pertbook-src\ or pertbook\ (with pyproject.toml)
rem   3. the project this script sits in          ..\pyproject.toml (templates\ of a checkout)
rem Dependencies come from the package index, or, if a folder "wheels" is beside the
rem script, from there only (for offices without internet access).
rem Later runs just start the watcher. To upgrade: put the new wheel beside the script and
rem delete .pertbook-venv (or set PERTBOOK_REINSTALL=1 for one run).
rem
rem Needs only Python 3.10 or newer (python.org installer; or set PYTHON=C:\path\python.exe).

setlocal EnableExtensions
set "HERE=%~dp0"
if "%HERE:~-1%"=="\" set "HERE=%HERE:~0,-1%"
set "VENV=%HERE%\.pertbook-venv"
set "VPY=%VENV%\Scripts\python.exe"
set "MARK=%VENV%\.pertbook-installed"

if "%PERTBOOK_REINSTALL%"=="1" goto install
if exist "%MARK%" goto run

:install
set "PY="
if defined PYTHON set PY="%PYTHON%"
if not defined PY where py >nul 2>nul && set "PY=py -3"
if not defined PY set "PY=python"
%PY% -c "import sys; sys.exit(sys.version_info < (3, 10))" >nul 2>nul
if errorlevel 1 (
    echo drop-folder: needs Python 3.10 or newer. Install it from python.org, or set PYTHON to python.exe.
    exit /b 1
)

set "SRC="
for /f "delims=" %%W in ('dir /b /o-d "%HERE%\pertbook-*.whl" 2^>nul') do if not defined SRC set "SRC=%HERE%\%%W"
if not defined SRC if exist "%HERE%\pertbook-src\pyproject.toml" set "SRC=%HERE%\pertbook-src"
if not defined SRC if exist "%HERE%\pertbook\pyproject.toml" set "SRC=%HERE%\pertbook"
if not defined SRC if exist "%HERE%\..\pyproject.toml" set "SRC=%HERE%\.."
if not defined SRC (
    echo drop-folder: nothing to install. Put pertbook-*.whl or the project folder pertbook-src beside this script.
    exit /b 1
)

echo drop-folder: first run: making %VENV% and installing pertbook from %SRC%
if exist "%VENV%" rmdir /s /q "%VENV%"
%PY% -m venv "%VENV%"
if errorlevel 1 exit /b 1
if exist "%HERE%\wheels\" (
    "%VPY%" -m pip install --quiet --no-index --find-links "%HERE%\wheels" "%SRC%"
) else (
    "%VPY%" -m pip install --quiet "%SRC%"
)
if errorlevel 1 exit /b 1
"%VPY%" -c "import converter.watch"
if errorlevel 1 exit /b 1
echo installed> "%MARK%"
echo drop-folder: installed

:run
rem The folder: the first argument unless it is an option, else pertbook-drop beside this script.
set "FOLDER=%HERE%\pertbook-drop"
set "FIRST=%~1"
if not defined FIRST goto collect
if "%FIRST:~0,1%"=="-" goto collect
set "FOLDER=%~1"
shift

:collect
set "REST="
:more
if "%~1"=="" goto start
set REST=%REST% %1
shift
goto more

:start
"%VPY%" -m converter watch "%FOLDER%" %REST%
exit /b %ERRORLEVEL%
